#pragma once
// Band assignment: observed bands matched to predicted levels as one minimum-cost
// assignment (hungarian.hpp). Costs are in units of squared standard deviations:
//
//   position     ((ν̃_obs − s ν̃_pred) / σ_n)²,  σ_n = expected_error_cm1 · n, n the quanta of
//                the level (an overtone or combination is predicted less well than a
//                fundamental);
//   activity     a level inactive in the band's technique (IR or Raman, by its species) is
//                not offered (prohibitive cost); a band without technique needs a level active
//                in either;
//   intensity    where the band gives a relative intensity and the level a predicted one in
//                that technique: intensity_weight · (log10(r_obs / r_pred))², each r relative
//                to the strongest of its kind, floored at intensity_floor (one decade off
//                costs as much as one σ of position);
//   polarization a Raman band marked polarized on a level that is not totally symmetric:
//                polarized_mismatch_cost (such a band cannot be polarized); depolarized on a
//                totally symmetric level: depolarized_mismatch_cost (possible when ρ is near ¾);
//   quanta       extra_quantum_cost per quantum beyond the first: overtones and combinations
//                are weaker and less often listed than fundamentals, so with equal residuals the
//                fundamental is the likelier assignment (a prior; common practice, no source);
//   unassigned   unassigned_cost per band left out (a band further than √cost σ from every
//                level is better left unassigned);
//   isotope      a band of an isotopologue on a level whose parent counterpart (same quanta
//   shift        and sublevel) holds a parent band: the position term is replaced by
//                (((ν̃_obs − ν̃_obs,parent) − s (ν̃_pred − ν̃_pred,parent)) / σ_shift,n)² with
//                σ_shift,n = n · max(shift_error_floor_cm1, shift_relative_error · |s Δν̃_pred|):
//                a force field's error largely cancels in a shift, so the observed shift
//                pattern, not the absolute positions, decides between close levels.
//
// Each level takes at most one band per technique and isotopologue; a band of isotopologue
// T is offered only the levels predicted for T, and all bands of all isotopologues are
// assigned in one problem. The shift term depends on the parent's assignment: the problem
// is solved again with the parent bands of the last solution until the assignment no longer
// changes (at most max_shift_rounds). Runner-up: for each band, the problem is solved again with its
// chosen option and its unassigned option forbidden; the runner-up is the level the band gets
// then and the margin the rise of the total cost (small: ambiguous; the other bands may
// move too).
#include <optional>
#include <string>
#include <vector>

#include "spectrum/predicted_levels.hpp"

namespace overtone {

enum class Technique { unspecified, infrared, raman };
enum class Polarization { unspecified, polarized, depolarized };

struct ObservedBand {
  double wavenumber_cm1 = 0.0;
  std::optional<double> relative_intensity;
  Technique technique = Technique::unspecified;
  Polarization polarization = Polarization::unspecified;
  std::string isotopologue;  // empty: the parent molecule
  std::string label;         // the user's own name for the band
  int line = 0;              // line of the CSV file (for messages), 0 when not from a file
};

// BANDS.csv (docs/assignment.md): a header naming the columns (wavenumber_cm1 required;
// relative_intensity, technique, polarization, isotopologue, label optional, any order),
// then one band per line; blank lines and lines starting with '#' are skipped. Throws Error
// naming the file and line for a malformed row.
std::vector<ObservedBand> parse_observed_bands(const std::string& csv_text, const std::string& origin);
std::vector<ObservedBand> read_observed_bands(const std::string& path);

// The levels predicted for one isotopologue ("" = the parent).
struct IsotopologueLevels {
  std::string tag;
  PredictedSpectrum predicted;
};

struct AssignOptions {
  double expected_error_cm1 = 20.0;  // σ of a fundamental, cm⁻¹ (a general force field's typical error)
  double unassigned_cost = 9.0;      // a 3σ residual
  double extra_quantum_cost = 1.0;   // per quantum beyond the first (a 1σ residual)
  double intensity_weight = 1.0;
  double intensity_floor = 0.01;  // relative intensities below 1 % count as 1 %
  double polarized_mismatch_cost = 16.0;
  double depolarized_mismatch_cost = 4.0;
  // Isotope shifts: an error of this fraction of the predicted shift (a force field's shift
  // is typically good to about 10 %, its absolute position to 1–2 %; common practice, no
  // source), never below the floor (anharmonic and resonance effects of a few cm⁻¹).
  bool isotope_shifts = true;
  double shift_relative_error = 0.1;
  double shift_error_floor_cm1 = 3.0;
  int max_shift_rounds = 5;
  bool fit_scale = false;    // fit one scale factor and assign again with it
  int max_scale_rounds = 5;  // assignment and fit alternate until stable, at most this often
};

void validate(const AssignOptions& options);  // throws Error naming the first invalid field

inline constexpr int no_alternative = -2;

struct BandAssignment {
  int band = 0;    // index into the observed bands
  int level = -1;  // index into levels of its isotopologue; −1: unassigned
  std::string isotopologue;
  double predicted_cm1 = 0.0;  // scaled by the factor in use
  double residual_cm1 = 0.0;   // observed − predicted (scaled)
  double cost = 0.0;
  int runner_up_level = -1;  // −1: unassigned; no_alternative: nothing else is allowed
  double margin = 0.0;       // total-cost rise when the chosen option is forbidden (∞: none)
  // An isotopologue band whose level's parent counterpart holds a parent band: the observed
  // and predicted (scaled) shifts from the parent, which the cost compared.
  std::optional<double> observed_shift_cm1;
  std::optional<double> predicted_shift_cm1;
};

struct FundamentalFound {
  std::string isotopologue;
  int level = 0;  // index into that isotopologue's levels
  bool found = false;
  int band = -1;
};

struct ResidualSummary {
  int assigned = 0;
  double rms_cm1 = 0.0;
  double max_abs_cm1 = 0.0;
};

struct AssignResult {
  std::vector<BandAssignment> bands;  // in the order of the observed list
  std::vector<FundamentalFound> fundamentals;
  double total_cost = 0.0;
  ResidualSummary unscaled;  // residuals against the unscaled predictions
  bool scale_fitted = false;
  double scale = 1.0;  // least-squares factor on the assigned bands
  double scale_standard_error = 0.0;
  ResidualSummary scaled;  // with the factor (when fitted)
  int scale_rounds = 0;
  int shift_rounds = 0;  // solutions with the parent's bands as reference (0: no isotope shifts)
  std::vector<std::string> warnings;
};

// Throws Error for invalid options, no bands, or a band whose isotopologue has no levels.
AssignResult assign_bands(const std::vector<ObservedBand>& bands,
                          const std::vector<IsotopologueLevels>& levels, const AssignOptions& options = {});

}  // namespace overtone
