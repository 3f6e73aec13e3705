#include "anharmonic/force_constants.hpp"

#include <fmt/format.h>

#include <algorithm>
#include <array>
#include <chrono>
#include <cmath>
#include <functional>
#include <optional>
#include <unordered_set>
#include <utility>

#include "core/error.hpp"
#include "core/option_checks.hpp"
#include "core/units.hpp"

namespace overtone {

// ---------------------------------------------------------------------------------------
// Tensors

ForceConstantTensors::ForceConstantTensors(int mode_count)
    : mode_count_(mode_count), cubic_(static_cast<std::size_t>(mode_count) * mode_count * mode_count, 0.0) {}

void ForceConstantTensors::set_cubic(int i, int j, int k, double value) {
  cubic_[index3(i, j, k)] = value;
  cubic_[index3(i, k, j)] = value;
  cubic_[index3(j, i, k)] = value;
  cubic_[index3(j, k, i)] = value;
  cubic_[index3(k, i, j)] = value;
  cubic_[index3(k, j, i)] = value;
}

std::uint64_t ForceConstantTensors::quartic_key(int i, int j, int k, int l) {
  std::array<int, 4> v{i, j, k, l};
  std::sort(v.begin(), v.end());
  // 16 bits per index: mode counts stay far below 65536.
  return (static_cast<std::uint64_t>(v[0]) << 48) | (static_cast<std::uint64_t>(v[1]) << 32) |
         (static_cast<std::uint64_t>(v[2]) << 16) | static_cast<std::uint64_t>(v[3]);
}

double ForceConstantTensors::quartic(int i, int j, int k, int l) const {
  const auto it = quartic_.find(quartic_key(i, j, k, l));
  return it == quartic_.end() ? 0.0 : it->second;
}

bool ForceConstantTensors::has_quartic(int i, int j, int k, int l) const {
  return quartic_.count(quartic_key(i, j, k, l)) > 0;
}

void ForceConstantTensors::set_quartic(int i, int j, int k, int l, double value) {
  quartic_[quartic_key(i, j, k, l)] = value;
}

std::vector<ForceConstantTensors::CubicEntry> ForceConstantTensors::cubic_entries(
    double threshold_cm1) const {
  std::vector<CubicEntry> entries;
  for (int i = 0; i < mode_count_; ++i)
    for (int j = i; j < mode_count_; ++j)
      for (int k = j; k < mode_count_; ++k) {
        const double value = cubic(i, j, k);
        if (std::abs(value) > threshold_cm1) entries.push_back({i, j, k, value});
      }
  return entries;
}

namespace {

std::vector<ForceConstantTensors::QuarticEntry> sorted_quartic_entries(
    const std::unordered_map<std::uint64_t, double>& quartic, double threshold_cm1, bool keep_all) {
  std::vector<ForceConstantTensors::QuarticEntry> entries;
  for (const auto& [key, value] : quartic) {
    if (!keep_all && !(std::abs(value) > threshold_cm1)) continue;
    entries.push_back({static_cast<int>(key >> 48), static_cast<int>((key >> 32) & 0xffff),
                       static_cast<int>((key >> 16) & 0xffff), static_cast<int>(key & 0xffff), value});
  }
  std::sort(entries.begin(), entries.end(), [](const auto& a, const auto& b) {
    return std::tie(a.i, a.j, a.k, a.l) < std::tie(b.i, b.j, b.k, b.l);
  });
  return entries;
}

}  // namespace

std::vector<ForceConstantTensors::QuarticEntry> ForceConstantTensors::quartic_entries(
    double threshold_cm1) const {
  return sorted_quartic_entries(quartic_, threshold_cm1, false);
}

std::vector<ForceConstantTensors::QuarticEntry> ForceConstantTensors::computed_quartic_entries() const {
  return sorted_quartic_entries(quartic_, 0.0, true);
}

std::string to_string(ForceConstantStatus status) {
  switch (status) {
    case ForceConstantStatus::ok:
      return "ok";
    case ForceConstantStatus::not_a_minimum:
      return "not_a_minimum";
  }
  return "unknown";
}

void ForceConstantOptions::validate() const {
  using namespace option_checks;
  const char* owner = "force-constant";
  require_in_left_open(owner, "step", step, 0.0, 0.5);
  require_at_least(owner, "full_quartic_max_modes", full_quartic_max_modes, 0);
  require_positive(owner, "symmetry_tolerance", symmetry_tolerance);
  require_positive(owner, "reuse_tolerance", reuse_tolerance);
  require_positive(owner, "minimum_frequency_cm1", minimum_frequency_cm1);
}

namespace detail {

// ---------------------------------------------------------------------------------------
// Symmetry tests and group averaging

namespace {

// Σ over distinct orderings σ, τ of the index tuple of Π_m R(g)_{σ_m τ_m}, summed over g:
// |G| times ⟨E, P E⟩ for the symmetrized unit tensor E at that index tuple, which is zero
// exactly when every invariant symmetric tensor vanishes there. The stage tests every
// cubic and computed quartic index tuple (~M⁴/24 of them), so what does not depend on the
// tuple (which modes are nondegenerate) is found once, and the per-tuple work allocates
// nothing.
//
// An ordering τ that moves an index into another degenerate set contributes products of
// at least two entries of R(g) outside the set blocks, i.e. at most the square of the
// representation error. Such orderings are skipped when that is negligible against
// vanishing_overlap (as they always were when every index is nondegenerate), which leaves
// one or a few orderings for most tuples of different sets.
class InvariantOverlap {
 public:
  explicit InvariantOverlap(const ModeSymmetry& symmetry)
      : symmetry_(symmetry),
        one_dimensional_(symmetry.mode_count(), false),
        // skipped terms are then below 24·(1e-6)² ≪ vanishing_overlap
        within_sets_only_(symmetry.representation_error() <= 1e-6) {
    for (const auto& members : symmetry.sets())
      if (members.size() == 1) one_dimensional_[static_cast<std::size_t>(members.front())] = true;
  }

  template <std::size_t Rank>
  double operator()(std::array<int, Rank> indices) const {
    std::sort(indices.begin(), indices.end());
    bool all_one_dimensional = true;
    for (int index : indices)
      all_one_dimensional = all_one_dimensional && one_dimensional_[static_cast<std::size_t>(index)];
    double total = 0.0;
    if (all_one_dimensional) {
      for (const auto& r : symmetry_.operations()) {
        double product = 1.0;
        for (int index : indices) product *= r(index, index);
        total += product;
      }
      return total / static_cast<double>(symmetry_.order());
    }
    // Reordering the positions of a term maps the distinct orderings τ onto themselves, so
    // every σ contributes the same sum as the sorted tuple: σ is fixed, which divides the
    // work by the number of orderings (up to Rank!). The orderings are kept as positions
    // in the sorted tuple, so that each R(g) is read only at the Rank² entries among them.
    constexpr std::size_t most_orderings = Rank == 3 ? 6 : 24;
    static_assert(Rank == 3 || Rank == 4);
    std::array<std::array<int, Rank>, most_orderings> orderings{};
    std::size_t ordering_count = 0;
    std::array<int, Rank> current = indices;
    const auto& set_of = symmetry_.degenerate_set();
    auto keeps_sets = [&](const std::array<int, Rank>& ordering) {
      for (std::size_t m = 0; m < Rank; ++m)
        if (set_of[static_cast<std::size_t>(ordering[m])] != set_of[static_cast<std::size_t>(indices[m])])
          return false;
      return true;
    };
    do {
      if (within_sets_only_ && !keeps_sets(current)) continue;
      for (std::size_t m = 0; m < Rank; ++m)
        orderings[ordering_count][m] =
            static_cast<int>(std::find(indices.begin(), indices.end(), current[m]) - indices.begin());
      ++ordering_count;
    } while (std::next_permutation(current.begin(), current.end()));
    std::array<std::array<double, Rank>, Rank> entries{};  // R(g) at (indices[a], indices[b])
    for (const auto& r : symmetry_.operations()) {
      for (std::size_t a = 0; a < Rank; ++a)
        for (std::size_t b = 0; b < Rank; ++b) entries[a][b] = r(indices[a], indices[b]);
      for (std::size_t t = 0; t < ordering_count; ++t) {
        double product = 1.0;
        for (std::size_t m = 0; m < Rank && product != 0.0; ++m)
          product *= entries[m][static_cast<std::size_t>(orderings[t][m])];
        total += product;
      }
    }
    return total / static_cast<double>(symmetry_.order());
  }

 private:
  const ModeSymmetry& symmetry_;
  std::vector<bool> one_dimensional_;  // per mode: its degenerate set has one member
  bool within_sets_only_;              // skip orderings that leave a set (see above)
};

// Zero test for the overlaps above: products of orthogonal matrix entries that are exact
// to the representation error.
constexpr double vanishing_overlap = 1e-6;

// Group average of one block of a fully symmetric tensor, the block spanned by the modes
// of the given sets (each R(g) applied to each index). Returns the block's largest change.
template <std::size_t Rank, class Get, class Set>
double average_block(const ModeSymmetry& symmetry, const std::array<std::vector<int>, Rank>& modes, Get get,
                     Set set) {
  std::array<int, Rank> sizes{};
  std::size_t total = 1;
  for (std::size_t a = 0; a < Rank; ++a) {
    sizes[a] = static_cast<int>(modes[a].size());
    total *= modes[a].size();
  }
  auto unflatten = [&](std::size_t flat) {
    std::array<int, Rank> pos{};
    for (std::size_t a = Rank; a-- > 0;) {
      pos[a] = static_cast<int>(flat % static_cast<std::size_t>(sizes[a]));
      flat /= static_cast<std::size_t>(sizes[a]);
    }
    return pos;
  };
  std::vector<double> block(total), averaged(total, 0.0);
  for (std::size_t f = 0; f < total; ++f) {
    const auto pos = unflatten(f);
    std::array<int, Rank> idx{};
    for (std::size_t a = 0; a < Rank; ++a) idx[a] = modes[a][static_cast<std::size_t>(pos[a])];
    block[f] = get(idx);
  }
  // R(g) applied to one index at a time: Rank·total·d operations per g instead of total².
  // Entries are visited in ascending flat order (outer × from × inner), as a flat loop
  // would, without dividing to find each entry's position; exact zeros of R(g) are
  // multiplied rather than tested for, which adds nothing.
  std::array<std::size_t, Rank> stride{};
  stride[Rank - 1] = 1;
  for (std::size_t a = Rank - 1; a-- > 0;) stride[a] = stride[a + 1] * static_cast<std::size_t>(sizes[a + 1]);
  std::vector<double> current(total), next(total);
  std::vector<double> set_block;  // R(g) on the modes of one axis, row-major (to, from)
  for (const auto& r : symmetry.operations()) {
    current = block;
    for (std::size_t a = 0; a < Rank; ++a) {
      std::fill(next.begin(), next.end(), 0.0);
      const auto& axis_modes = modes[a];
      const auto d = static_cast<std::size_t>(sizes[a]);
      set_block.resize(d * d);
      for (std::size_t to = 0; to < d; ++to)
        for (std::size_t from = 0; from < d; ++from)
          set_block[to * d + from] = r(axis_modes[to], axis_modes[from]);
      const std::size_t inner_count = stride[a], outer_count = total / (stride[a] * d);
      for (std::size_t outer = 0; outer < outer_count; ++outer)
        for (std::size_t from = 0; from < d; ++from)
          for (std::size_t inner = 0; inner < inner_count; ++inner) {
            const std::size_t base = outer * d * inner_count + inner;
            const double value = current[base + from * inner_count];
            if (value == 0.0) continue;
            for (std::size_t to = 0; to < d; ++to)
              next[base + to * inner_count] += set_block[to * d + from] * value;
          }
      current.swap(next);
    }
    for (std::size_t f = 0; f < total; ++f) averaged[f] += current[f];
  }
  double change = 0.0;
  for (std::size_t f = 0; f < total; ++f) {
    averaged[f] /= static_cast<double>(symmetry.order());
    change = std::max(change, std::abs(averaged[f] - block[f]));
    const auto pos = unflatten(f);
    std::array<int, Rank> idx{};
    for (std::size_t a = 0; a < Rank; ++a) idx[a] = modes[a][static_cast<std::size_t>(pos[a])];
    set(idx, averaged[f]);
  }
  return change;
}

// The number of invariants of a block of degenerate sets (ModeSymmetry::invariant_count,
// the multiplicity of the trivial representation in ⊗_s Sym^{n_s}(set s)) is the sum of
// InvariantOverlap over the block's constants (the trace of the group average on the
// block), each term ≥ 0, so a block with none has every constant forbidden — found from
// |G| products per block instead of a zero test per constant. That decides "all forbidden"
// only when the matrices are this close to a true representation: then the count is an
// integer to about this and each constant's overlap is far below vanishing_overlap.
// Otherwise every constant is tested on its own.
constexpr double exact_representation = 1e-8;

// The unique constants of a block (sorted set ids): one mode per position from its set,
// non-decreasing within a repeated set, so that each index multiset appears once.
template <std::size_t Rank>
std::vector<std::array<int, Rank>> block_members(const std::vector<std::vector<int>>& sets,
                                                 const std::array<int, Rank>& sorted_sets) {
  std::vector<std::array<int, Rank>> members;
  std::array<std::size_t, Rank> position{};
  const auto set_of = [&](std::size_t a) -> const std::vector<int>& {
    return sets[static_cast<std::size_t>(sorted_sets[a])];
  };
  std::function<void(std::size_t)> choose = [&](std::size_t a) {
    if (a == Rank) {
      std::array<int, Rank> modes{};
      for (std::size_t b = 0; b < Rank; ++b) modes[b] = set_of(b)[position[b]];
      members.push_back(modes);
      return;
    }
    const bool repeated = a > 0 && sorted_sets[a] == sorted_sets[a - 1];
    for (position[a] = repeated ? position[a - 1] : 0; position[a] < set_of(a).size(); ++position[a])
      choose(a + 1);
  };
  choose(0);
  return members;
}

// Group average of one block of sets followed by zeroing its forbidden constants: the
// block's unique constants are tested (all at once when the block carries no invariant),
// averaged if the block is complete and not all forbidden, and the forbidden ones set to
// zero. Returns the change made by the average (for an all-forbidden complete block, its
// largest magnitude: the average is zero there up to round-off) and counts the forbidden.
template <std::size_t Rank, class Has, class Get, class Set>
double symmetrize_and_zero_block(const ModeSymmetry& symmetry, const std::vector<std::vector<int>>& sets,
                                 const InvariantOverlap& overlap, const std::array<int, Rank>& sorted_sets,
                                 Has has, Get get, Set set, std::size_t& forbidden) {
  const bool none_allowed = symmetry.representation_error() <= exact_representation &&
                            as_multiplicity(symmetry.invariant_count(sorted_sets)).count == 0;
  std::vector<std::array<int, Rank>> members = block_members(sets, sorted_sets);
  const std::size_t member_count = members.size();
  members.erase(std::remove_if(members.begin(), members.end(), [&](const auto& x) { return !has(x); }),
                members.end());
  const bool complete = members.size() == member_count;
  std::vector<bool> vanishes(members.size());
  bool all_vanish = true;
  double largest = 0.0;
  for (std::size_t e = 0; e < members.size(); ++e) {
    vanishes[e] = none_allowed || std::abs(overlap(members[e])) < vanishing_overlap;
    all_vanish = all_vanish && vanishes[e];
    largest = std::max(largest, std::abs(get(members[e])));
  }
  double change = 0.0;
  if (complete) {
    std::array<std::vector<int>, Rank> block_sets;
    for (std::size_t a = 0; a < Rank; ++a) block_sets[a] = sets[static_cast<std::size_t>(sorted_sets[a])];
    change = all_vanish ? largest : average_block<Rank>(symmetry, block_sets, get, set);
  }
  for (std::size_t e = 0; e < members.size(); ++e)
    if (vanishes[e]) {
      set(members[e], 0.0);
      ++forbidden;
    }
  return change;
}

}  // namespace

bool cubic_must_vanish(const ModeSymmetry& symmetry, int i, int j, int k) {
  return std::abs(InvariantOverlap(symmetry)(std::array<int, 3>{i, j, k})) < vanishing_overlap;
}

namespace {

// The blocks of sets (sorted set ids) that hold a computed quartic constant: a block
// without one has nothing to average or zero, and they are most of the m⁴/24 blocks of a
// large molecule.
std::vector<std::array<int, 4>> computed_quartic_blocks(const ForceConstantTensors& constants,
                                                        const ModeSymmetry& symmetry) {
  const std::vector<int>& set_of_mode = symmetry.degenerate_set();
  std::vector<std::array<int, 4>> blocks;
  for (const auto& e : constants.computed_quartic_entries()) {
    std::array<int, 4> block{};
    const std::array<int, 4> modes{e.i, e.j, e.k, e.l};
    for (std::size_t a = 0; a < 4; ++a) block[a] = set_of_mode[static_cast<std::size_t>(modes[a])];
    std::sort(block.begin(), block.end());
    blocks.push_back(block);
  }
  std::sort(blocks.begin(), blocks.end());
  blocks.erase(std::unique(blocks.begin(), blocks.end()), blocks.end());
  return blocks;
}

// The stage's group average and zeroing, block by block (blocks are disjoint, so this is
// the same as averaging everything over the group and then zeroing every cubic and
// computed quartic constant that symmetry forbids), but blocks without invariants — most
// of them for large molecules — skip both the per-constant tests and the average. A
// quartic block is averaged only when all its constants were computed. Returns the
// largest change made by the average.
double symmetrize_and_zero(ForceConstantTensors& constants, const ModeSymmetry& symmetry,
                           std::size_t& forbidden_cubic, std::size_t& forbidden_quartic) {
  const auto& sets = symmetry.sets();
  const int set_count = static_cast<int>(sets.size());
  const InvariantOverlap overlap(symmetry);
  double change = 0.0;
  auto has3 = [](const std::array<int, 3>&) { return true; };
  auto get3 = [&](const std::array<int, 3>& x) { return constants.cubic(x[0], x[1], x[2]); };
  auto put3 = [&](const std::array<int, 3>& x, double v) { constants.set_cubic(x[0], x[1], x[2], v); };
  for (int a = 0; a < set_count; ++a)
    for (int b = a; b < set_count; ++b)
      for (int c = b; c < set_count; ++c)
        change = std::max(change, symmetrize_and_zero_block<3>(symmetry, sets, overlap, {a, b, c}, has3, get3,
                                                               put3, forbidden_cubic));
  auto has4 = [&](const std::array<int, 4>& x) { return constants.has_quartic(x[0], x[1], x[2], x[3]); };
  auto get4 = [&](const std::array<int, 4>& x) { return constants.quartic(x[0], x[1], x[2], x[3]); };
  auto put4 = [&](const std::array<int, 4>& x, double v) {
    constants.set_quartic(x[0], x[1], x[2], x[3], v);
  };
  for (const std::array<int, 4>& block : computed_quartic_blocks(constants, symmetry))
    change = std::max(change, symmetrize_and_zero_block<4>(symmetry, sets, overlap, block, has4, get4, put4,
                                                           forbidden_quartic));
  return change;
}

}  // namespace

}  // namespace detail

// ---------------------------------------------------------------------------------------
// Finite differences

namespace {

using Point = std::vector<int>;  // displacement in units of h along each normal coordinate

Point unit_point(int m, std::initializer_list<std::pair<int, int>> entries) {
  Point p(static_cast<std::size_t>(m), 0);
  for (const auto& [index, value] : entries) p[static_cast<std::size_t>(index)] += value;
  return p;
}

// Points have at most a few small nonzero entries, so hashing those is cheap and spreads
// them well (FNV-1a over index and value).
struct PointHash {
  std::size_t operator()(const Point& p) const {
    std::uint64_t hash = 14695981039346656037ull;
    for (std::size_t k = 0; k < p.size(); ++k)
      if (p[k] != 0) {
        hash ^= (static_cast<std::uint64_t>(k) << 8) ^ static_cast<std::uint64_t>(p[k] & 0xff);
        hash *= 1099511628211ull;
      }
    return static_cast<std::size_t>(hash);
  }
};

// An operation on the normal coordinates stored by columns, nonzero entries only. The
// cleaned R(g) are block-diagonal over the degenerate sets, so a column has at most the
// size of its set (a single ±1 for a signed permutation): images of sparse points, and
// gradients and Hessians carried through g, then cost O(set size) per entry instead of
// O(M) — the dense products dominated the stage for large molecules.
struct SparseOperation {
  struct Entry {
    int row;
    double value;
  };
  std::vector<std::vector<Entry>> columns;
  bool signed_permutation = false;  // every entry 0 or ±1

  explicit SparseOperation(const Eigen::MatrixXd& r) : columns(static_cast<std::size_t>(r.cols())) {
    constexpr double exact = 1e-9;  // entries of an exact group matrix that are 0 or ±1
    signed_permutation = (r.array().abs() < exact || (r.array().abs() - 1.0).abs() < exact).all();
    for (Eigen::Index k = 0; k < r.cols(); ++k)
      for (Eigen::Index i = 0; i < r.rows(); ++i)
        if (r(i, k) != 0.0) columns[static_cast<std::size_t>(k)].push_back({static_cast<int>(i), r(i, k)});
  }

  // Rᵀ v.
  Eigen::VectorXd transpose_times(const Eigen::VectorXd& v) const {
    Eigen::VectorXd result(static_cast<Eigen::Index>(columns.size()));
    for (std::size_t k = 0; k < columns.size(); ++k) {
      double sum = 0.0;
      for (const Entry& e : columns[k]) sum += e.value * v[e.row];
      result[static_cast<Eigen::Index>(k)] = sum;
    }
    return result;
  }

  // Rᵀ A R.
  Eigen::MatrixXd congruence(const Eigen::MatrixXd& a) const {
    const auto m = static_cast<Eigen::Index>(columns.size());
    Eigen::MatrixXd result(m, m);
    for (Eigen::Index j = 0; j < m; ++j)
      for (Eigen::Index i = 0; i < m; ++i) {
        double sum = 0.0;
        for (const Entry& ei : columns[static_cast<std::size_t>(i)])
          for (const Entry& ej : columns[static_cast<std::size_t>(j)])
            sum += ei.value * a(ei.row, ej.row) * ej.value;
        result(i, j) = sum;
      }
    return result;
  }
};

// Normal-coordinate Hessians (and gradients) at displaced points, each computed once and
// reused through the group: V(Rq) = V(q) gives ∇V(q) = Rᵀ∇V(Rq), ∇²V(q) = Rᵀ∇²V(Rq)R.
class DisplacedEvaluator {
 public:
  DisplacedEvaluator(const Potential& potential, const detail::NormalCoordinateFrame& frame,
                     const std::vector<Eigen::MatrixXd>* operations, double step)
      : potential_(potential),
        frame_(frame),
        step_(step),
        analytic_(potential.has_analytic_hessian()),
        m_(static_cast<int>(frame.frequencies_cm1.size())),
        image_(static_cast<std::size_t>(m_), 0),
        image_values_(static_cast<std::size_t>(m_), 0.0) {
    if (!operations) return;
    operations_.reserve(operations->size());
    for (const auto& r : *operations) operations_.emplace_back(r);
  }

  const Eigen::MatrixXd& hessian(const Point& p) {
    if (auto it = hessians_.find(p); it != hessians_.end()) return it->second;
    Eigen::MatrixXd h;
    // A Hessian from central differences carries a truncation error tied to its stencil
    // along the normal coordinates; only an operation that maps the stencil onto itself (a
    // signed permutation of the coordinates) carries that error along exactly, so that it
    // still cancels in the outer differences. Gradients and analytic Hessians are exact.
    if (const auto image = symmetric_image(p, hessians_, !analytic_)) {
      h = operations_[image->first].congruence(image->second->second);
      ++hessians_from_symmetry_;
    } else if (analytic_) {
      h = frame_.hessian_q(potential_.hessian(position(p)));
    } else {
      h.resize(m_, m_);
      // −h before +h in each column: the order in which points are computed decides which
      // of them are obtained through the group (and so the round-off of the constants);
      // this is the order earlier versions used.
      Point stencil = p;
      for (int j = 0; j < m_; ++j) {
        auto& shifted = stencil[static_cast<std::size_t>(j)];
        --shifted;
        const Eigen::VectorXd& minus = gradient(stencil);
        shifted += 2;
        h.col(j) = (gradient(stencil) - minus) / (2.0 * step_);
        --shifted;
      }
      h = 0.5 * (h + h.transpose()).eval();
    }
    if (!h.allFinite())
      throw Error(
          fmt::format("the potential '{}' gave a non-finite hessian at a displacement of the force-constant "
                      "scheme",
                      potential_.description()));
    return hessians_.emplace(p, std::move(h)).first->second;
  }

  std::size_t hessian_count() const { return hessians_.size(); }
  std::size_t hessians_from_symmetry() const { return hessians_from_symmetry_; }

 private:
  template <class Value>
  using PointMap = std::unordered_map<Point, Value, PointHash>;

  Eigen::VectorXd position(const Point& p) const {
    Eigen::VectorXd q(m_);
    for (int k = 0; k < m_; ++k) q[k] = step_ * p[static_cast<std::size_t>(k)];
    return frame_.cartesian(q);
  }

  const Eigen::VectorXd& gradient(const Point& p) {
    if (auto it = gradients_.find(p); it != gradients_.end()) return it->second;
    Eigen::VectorXd g;
    if (const auto image = symmetric_image(p, gradients_)) {
      g = operations_[image->first].transpose_times(image->second->second);
    } else {
      Eigen::VectorXd cartesian;
      potential_.energy_and_gradient(position(p), cartesian);
      g = frame_.gradient_q(cartesian);
      if (!g.allFinite())
        throw Error(
            fmt::format("the potential '{}' gave a non-finite gradient at a displacement of the "
                        "force-constant scheme",
                        potential_.description()));
    }
    return gradients_.emplace(p, std::move(g)).first->second;
  }

  // The first operation g (in group order) and an already computed point equal to R(g)·p.
  template <class Map>
  std::optional<std::pair<std::size_t, typename Map::const_iterator>> symmetric_image(
      const Point& p, const Map& map, bool signed_permutations_only = false) {
    if (operations_.empty()) return std::nullopt;
    std::vector<int> displaced;  // the coordinates p moves along
    for (int k = 0; k < m_; ++k)
      if (p[static_cast<std::size_t>(k)] != 0) displaced.push_back(k);
    constexpr double integer_tolerance = 1e-6;  // R is exact to far better than this when used
    for (std::size_t g = 1; g < operations_.size(); ++g) {
      const SparseOperation& r = operations_[g];
      if (signed_permutations_only && !r.signed_permutation) continue;
      // R(g)·p accumulated over the columns of the displaced coordinates; only the rows
      // those columns reach can be nonzero.
      touched_.clear();
      for (int k : displaced)
        for (const SparseOperation::Entry& e : r.columns[static_cast<std::size_t>(k)]) {
          auto& value = image_values_[static_cast<std::size_t>(e.row)];
          if (value == 0.0) touched_.push_back(e.row);
          value += e.value * p[static_cast<std::size_t>(k)];
        }
      bool integral = true;
      for (int row : touched_) {
        auto& value = image_values_[static_cast<std::size_t>(row)];
        const double rounded = std::round(value);
        integral = integral && std::abs(value - rounded) < integer_tolerance;
        image_[static_cast<std::size_t>(row)] = static_cast<int>(rounded);
        value = 0.0;
      }
      std::optional<typename Map::const_iterator> found;
      if (integral && image_ != p)
        if (auto it = map.find(image_); it != map.end()) found = it;
      for (int row : touched_) image_[static_cast<std::size_t>(row)] = 0;
      if (found) return std::make_pair(g, *found);
    }
    return std::nullopt;
  }

  const Potential& potential_;
  const detail::NormalCoordinateFrame& frame_;
  std::vector<SparseOperation> operations_;  // empty: no reuse
  double step_;
  bool analytic_;
  int m_;
  PointMap<Eigen::MatrixXd> hessians_;
  PointMap<Eigen::VectorXd> gradients_;
  std::size_t hessians_from_symmetry_ = 0;
  // Scratch for symmetric_image, kept zero between calls: the image point, its unrounded
  // entries and the rows they occupy.
  Point image_;
  std::vector<double> image_values_;
  std::vector<int> touched_;
};

// Running mean and spread of the estimates of one constant.
struct Estimate {
  double sum = 0.0;
  int count = 0;
  double low = 0.0, high = 0.0;
  void add(double value) {
    if (count == 0) low = high = value;
    low = std::min(low, value);
    high = std::max(high, value);
    sum += value;
    ++count;
  }
  double mean() const { return sum / count; }
  double spread() const { return high - low; }
};

// Operations exactly block-diagonal over the sets, with nondegenerate diagonal entries
// snapped to ±1, so that reused points are exact images.
std::vector<Eigen::MatrixXd> cleaned_operations(const ModeSymmetry& symmetry) {
  std::vector<Eigen::MatrixXd> result = symmetry.block_operations();
  for (auto& r : result)
    for (const auto& members : symmetry.sets())
      if (members.size() == 1)
        r(members.front(), members.front()) = r(members.front(), members.front()) < 0.0 ? -1.0 : 1.0;
  return result;
}

// ---------------------------------------------------------------------------------------
// Phases of the stage

void check_input(const Potential& potential, const HarmonicResult& harmonic, const ModeSymmetry& symmetry) {
  const int m = static_cast<int>(harmonic.mode_count());
  if (m < 1) throw Error("the harmonic result has no vibrational modes");
  if (harmonic.coordinates_angstrom.size() != static_cast<Eigen::Index>(3 * potential.atom_count()))
    throw Error(fmt::format("the harmonic result is for {} coordinates but the potential '{}' has {} atoms",
                            harmonic.coordinates_angstrom.size(), potential.description(),
                            potential.atom_count()));
  if (symmetry.mode_count() != static_cast<std::size_t>(m))
    throw Error(fmt::format("the mode symmetry covers {} modes, expected {}", symmetry.mode_count(), m));
}

// Status not_a_minimum (with the reason) when a mode is too soft for dimensionless
// coordinates; true when the stage may go on.
bool check_minimum(const HarmonicResult& harmonic, const ForceConstantOptions& options,
                   ForceConstantResult& result) {
  for (Eigen::Index k = 0; k < harmonic.frequencies_cm1.size(); ++k)
    if (!(harmonic.frequencies_cm1[k] >= options.minimum_frequency_cm1)) {
      result.status = ForceConstantStatus::not_a_minimum;
      result.message = fmt::format(
          "mode {} (ascending order) has harmonic wavenumber {:.2f} cm-1, below the {} cm-1 needed for "
          "dimensionless normal coordinates: the geometry is not a well-defined minimum",
          k + 1, harmonic.frequencies_cm1[k], options.minimum_frequency_cm1);
      return false;
    }
  return true;
}

// Whether the group is used at all, and whether exactly enough to reuse displaced Hessians.
void decide_symmetry_use(const ModeSymmetry& symmetry, const ForceConstantOptions& options,
                         ForceConstantResult& result) {
  result.symmetry_used = options.use_symmetry && symmetry.has_group() &&
                         symmetry.representation_error() <= options.symmetry_tolerance;
  if (options.use_symmetry && symmetry.has_group() && !result.symmetry_used)
    result.warnings.push_back(
        fmt::format("the point group ({}) was not used: its matrices on the normal coordinates deviate by "
                    "{:.2g}, above the "
                    "tolerance {:.2g} (symmetrize the geometry and Hessian first)",
                    symmetry.point_group().empty() ? "given" : symmetry.point_group(),
                    symmetry.representation_error(), options.symmetry_tolerance));
  result.symmetry_reused_hessians =
      result.symmetry_used && symmetry.representation_error() <= options.reuse_tolerance;
  if (result.symmetry_used && !result.symmetry_reused_hessians)
    result.warnings.push_back(fmt::format(
        "displaced Hessians were not reused through the point group: its matrices on the normal coordinates "
        "deviate "
        "by {:.2g}, above {:.2g} (symmetrize the geometry and Hessian before the harmonic analysis)",
        symmetry.representation_error(), options.reuse_tolerance));
}

// Pairs of modes displaced together: all of them for the full quartic field, else only
// pairs inside one degenerate set.
std::vector<std::pair<int, int>> displaced_pairs(const ModeSymmetry& symmetry, bool full_quartic) {
  const int m = static_cast<int>(symmetry.mode_count());
  const auto& set_of = symmetry.degenerate_set();
  std::vector<std::pair<int, int>> pairs;
  for (int k = 0; k < m; ++k)
    for (int l = k + 1; l < m; ++l)
      if (full_quartic || set_of[static_cast<std::size_t>(k)] == set_of[static_cast<std::size_t>(l)])
        pairs.emplace_back(k, l);
  return pairs;
}

// The reference, ±h along every mode and the four mixed displacements of every pair.
std::vector<Point> displacement_points(int m, const std::vector<std::pair<int, int>>& pairs) {
  std::vector<Point> points{unit_point(m, {})};
  for (int k = 0; k < m; ++k) {
    points.push_back(unit_point(m, {{k, 1}}));
    points.push_back(unit_point(m, {{k, -1}}));
  }
  for (const auto& [k, l] : pairs)
    for (int sk : {1, -1})
      for (int sl : {1, -1}) points.push_back(unit_point(m, {{k, sk}, {l, sl}}));
  return points;
}

// Hessians at every point, and the evaluations this took against the scheme without symmetry.
void evaluate_points(const Potential& potential, DisplacedEvaluator& evaluator,
                     const std::vector<Point>& points, const ProgressCallback& progress,
                     ForceConstantResult& result) {
  const int m = static_cast<int>(result.frequencies_cm1.size());
  const EvaluationCounts before = potential.counts();
  const auto start = std::chrono::steady_clock::now();
  const int total = static_cast<int>(points.size());
  for (int done = 0; done < total; ++done) {
    evaluator.hessian(points[static_cast<std::size_t>(done)]);
    if (progress)
      progress({"force constants", done + 1, total, "displaced Hessians",
                std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count()});
  }
  const EvaluationCounts after = potential.counts();
  result.evaluations.energies = after.energies - before.energies;
  result.evaluations.gradients = after.gradients - before.gradients;
  result.evaluations.hessians = after.hessians - before.hessians;
  result.displaced_hessians = evaluator.hessian_count();
  result.hessians_from_symmetry = evaluator.hessians_from_symmetry();
  if (potential.has_analytic_hessian()) {
    result.naive_evaluations.hessians = points.size();
    return;
  }
  std::unordered_set<Point, PointHash> needed;
  for (const auto& p : points)
    for (int j = 0; j < m; ++j)
      for (int s : {1, -1}) {
        Point q = p;
        q[static_cast<std::size_t>(j)] += s;
        needed.insert(std::move(q));
      }
  result.naive_evaluations.gradients = needed.size();
}

// Differences of the displaced Hessians: along each mode (first and second) and along
// each displaced pair (mixed second differences, found through a dense M×M table since
// they are looked up several times for each of the ~M⁴/24 quartic index tuples).
struct HessianDifferences {
  std::vector<Eigen::MatrixXd> first, second, mixed;
  std::vector<int> mixed_of_pair;  // k·M + l → index into mixed, −1 if not displaced
};

HessianDifferences hessian_differences(DisplacedEvaluator& evaluator, int m, double h,
                                       const std::vector<std::pair<int, int>>& pairs) {
  HessianDifferences d;
  const Eigen::MatrixXd& center = evaluator.hessian(unit_point(m, {}));
  d.first.resize(static_cast<std::size_t>(m));
  d.second.resize(static_cast<std::size_t>(m));
  for (int k = 0; k < m; ++k) {
    const Eigen::MatrixXd& plus = evaluator.hessian(unit_point(m, {{k, 1}}));
    const Eigen::MatrixXd& minus = evaluator.hessian(unit_point(m, {{k, -1}}));
    d.first[static_cast<std::size_t>(k)] = (plus - minus) / (2.0 * h);
    d.second[static_cast<std::size_t>(k)] = (plus - 2.0 * center + minus) / (h * h);
  }
  d.mixed_of_pair.assign(static_cast<std::size_t>(m) * m, -1);
  for (const auto& [k, l] : pairs) {
    d.mixed_of_pair[static_cast<std::size_t>(k) * m + l] = static_cast<int>(d.mixed.size());
    d.mixed.push_back((evaluator.hessian(unit_point(m, {{k, 1}, {l, 1}})) -
                       evaluator.hessian(unit_point(m, {{k, 1}, {l, -1}})) -
                       evaluator.hessian(unit_point(m, {{k, -1}, {l, 1}})) +
                       evaluator.hessian(unit_point(m, {{k, -1}, {l, -1}}))) /
                      (4.0 * h * h));
  }
  return d;
}

// Cubic: one estimate per distinct index used as the displaced direction. Returns the
// largest spread between the estimates of one constant.
double cubic_constants(const HessianDifferences& d, ForceConstantTensors& constants) {
  const int m = constants.mode_count();
  double spread = 0.0;
  for (int i = 0; i < m; ++i)
    for (int j = i; j < m; ++j)
      for (int k = j; k < m; ++k) {
        Estimate e;
        const std::array<int, 3> idx{i, j, k};
        for (int a = 0; a < 3; ++a) {
          if (a > 0 && idx[a] == idx[a - 1]) continue;
          e.add(d.first[static_cast<std::size_t>(idx[a])](idx[(a + 1) % 3], idx[(a + 2) % 3]));
        }
        spread = std::max(spread, e.spread());
        constants.set_cubic(i, j, k, e.mean());
      }
  return spread;
}

// The estimates of φ_ijkl (idx sorted): one per distinct choice of the two displaced
// indices (a repeated index from a single displacement, two different ones from a mixed
// displacement, where that pair was displaced).
Estimate quartic_estimate(const HessianDifferences& d, int m, const std::array<int, 4>& idx) {
  Estimate e;
  std::array<std::pair<int, int>, 6> used{};
  int used_count = 0;
  for (int a = 0; a < 4; ++a)
    for (int b = a + 1; b < 4; ++b) {
      const std::pair<int, int> chosen{idx[a], idx[b]};
      if (std::find(used.begin(), used.begin() + used_count, chosen) != used.begin() + used_count) continue;
      used[static_cast<std::size_t>(used_count++)] = chosen;
      std::array<int, 2> rest{};
      int r = 0;
      for (int c = 0; c < 4; ++c)
        if (c != a && c != b) rest[static_cast<std::size_t>(r++)] = idx[c];
      if (chosen.first == chosen.second) {
        e.add(d.second[static_cast<std::size_t>(chosen.first)](rest[0], rest[1]));
      } else if (const int pair = d.mixed_of_pair[static_cast<std::size_t>(chosen.first) * m + chosen.second];
                 pair >= 0) {
        e.add(d.mixed[static_cast<std::size_t>(pair)](rest[0], rest[1]));
      }
    }
  return e;
}

// The index sets (sorted) of the quartic constants some displacement gives: the ones
// that hold a displaced index twice (a single displacement) or a displaced pair. Listing
// them costs O(m³ + pairs·m²) instead of testing all m⁴/24.
std::vector<std::array<int, 4>> estimable_quartic_indices(int m,
                                                          const std::vector<std::pair<int, int>>& pairs) {
  std::vector<std::array<int, 4>> indices;
  const auto add_with = [&](int first, int second) {
    for (int a = 0; a < m; ++a)
      for (int b = a; b < m; ++b) {
        std::array<int, 4> idx{first, second, a, b};
        std::sort(idx.begin(), idx.end());
        indices.push_back(idx);
      }
  };
  for (int k = 0; k < m; ++k) add_with(k, k);
  for (const auto& [k, l] : pairs) add_with(k, l);
  std::sort(indices.begin(), indices.end());
  indices.erase(std::unique(indices.begin(), indices.end()), indices.end());
  return indices;
}

// Quartic constants that some displacement gives; returns how many unique ones, and
// widens spread by their estimates' spread.
std::size_t quartic_constants(const HessianDifferences& d, const std::vector<std::pair<int, int>>& pairs,
                              ForceConstantTensors& constants, double& spread) {
  const int m = constants.mode_count();
  std::size_t computed = 0;
  for (const std::array<int, 4>& idx : estimable_quartic_indices(m, pairs)) {
    const Estimate e = quartic_estimate(d, m, idx);
    if (e.count == 0) continue;
    spread = std::max(spread, e.spread());
    constants.set_quartic(idx[0], idx[1], idx[2], idx[3], e.mean());
    ++computed;
  }
  return computed;
}

}  // namespace

ForceConstantResult compute_force_constants(const Potential& potential, const HarmonicResult& harmonic,
                                            const ForceConstantOptions& options) {
  return compute_force_constants(potential, harmonic, ModeSymmetry::without_group(harmonic.frequencies_cm1),
                                 options);
}

ForceConstantResult compute_force_constants(const Potential& potential, const HarmonicResult& harmonic,
                                            const ModeSymmetry& symmetry,
                                            const ForceConstantOptions& options) {
  options.validate();
  check_input(potential, harmonic, symmetry);
  const int m = static_cast<int>(harmonic.mode_count());
  ForceConstantResult result;
  result.frequencies_cm1 = harmonic.frequencies_cm1;
  result.symmetry = symmetry;
  result.step = options.step;
  result.constants = ForceConstantTensors(m);
  if (!check_minimum(harmonic, options, result)) return result;
  decide_symmetry_use(symmetry, options, result);

  const detail::NormalCoordinateFrame frame(harmonic);
  const std::vector<Eigen::MatrixXd> operations = cleaned_operations(symmetry);
  DisplacedEvaluator evaluator(potential, frame, result.symmetry_reused_hessians ? &operations : nullptr,
                               options.step);
  result.full_quartic = m <= options.full_quartic_max_modes;
  result.method = potential.has_analytic_hessian() ? "analytic Hessians"
                                                   : "Hessians from central differences of gradients";
  const std::vector<std::pair<int, int>> pairs = displaced_pairs(symmetry, result.full_quartic);
  evaluate_points(potential, evaluator, displacement_points(m, pairs), options.progress, result);

  const HessianDifferences differences = hessian_differences(evaluator, m, options.step, pairs);
  double spread = cubic_constants(differences, result.constants);
  const std::size_t computed_quartics = quartic_constants(differences, pairs, result.constants, spread);
  result.permutation_spread_cm1 = spread;

  if (result.symmetry_used)
    result.symmetry_adjustment_cm1 = detail::symmetrize_and_zero(
        result.constants, symmetry, result.forbidden_cubic, result.forbidden_quartic);
  result.message =
      fmt::format("{} cubic and {} quartic constants from {} displaced Hessians ({} by symmetry), {}",
                  m * (m + 1) * (m + 2) / 6, computed_quartics, result.displaced_hessians,
                  result.hessians_from_symmetry, result.method);
  return result;
}

}  // namespace overtone
