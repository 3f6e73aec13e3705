#include "report/symmetry_json.hpp"

namespace overtone {

namespace {

using nlohmann::json;

json operations_to_json(const PointGroupResult& group) {
  json operations = json::array();
  const PointGroup& point_group = group.group;
  for (int g = 0; g < point_group.order(); ++g) {
    const SymmetryOperation& operation = point_group.operations[static_cast<std::size_t>(g)];
    // The axis in the frame of the file's coordinates (and of atoms[].position_angstrom).
    const Eigen::Vector3d axis = group.symmetry_from_file.transpose() * operation.axis;
    json permutation = json::array();
    if (static_cast<std::size_t>(g) < group.permutations.size())
      for (int atom : group.permutations[static_cast<std::size_t>(g)]) permutation.push_back(atom + 1);
    operations.push_back({{"name", operation.ascii_name},
                          {"display_name", operation.name},
                          {"class", operation.class_index + 1},
                          {"proper", operation.proper},
                          {"axis", {axis.x(), axis.y(), axis.z()}},
                          {"atom_permutation", permutation}});
  }
  return operations;
}

json character_table_to_json(const CharacterTable& table) {
  json classes = json::array();
  for (std::size_t c = 0; c < table.class_labels.size(); ++c)
    classes.push_back({{"label", table.ascii_class_labels[c]},
                       {"display_label", table.class_labels[c]},
                       {"size", table.class_sizes[c]}});
  json irreps = json::array();
  for (const Irrep& irrep : table.irreps)
    irreps.push_back({{"label", irrep.label},
                      {"display_label", irrep.display_label},
                      {"dimension", irrep.dimension},
                      {"characters", irrep.characters},
                      {"linear_functions", irrep.linear_functions},
                      {"rotations", irrep.rotations},
                      {"quadratic_functions", irrep.quadratic_functions},
                      {"ir_active", irrep.ir_active},
                      {"raman_active", irrep.raman_active}});
  return {{"classes", classes}, {"irreps", irreps}};
}

}  // namespace

nlohmann::json symmetry_tables_to_json(const PointGroupResult& group, const ModeSymmetryResult& modes) {
  return {{"display_name", group.group.display_name},
          {"vibrational_representation_display", modes.display_decomposition},
          {"operations", operations_to_json(group)},
          {"character_table", character_table_to_json(group.group.character_table)}};
}

}  // namespace overtone
