// cli/residue.hpp: numbers that are rounding residue are not results. One rule, used by `report` and by
// the text of `solve` and `noise`: a number computed as a difference of much larger terms (an excess
// noise, a sum of two opposite currents) whose size is at the level of the doubles' rounding of those
// terms is printed as 0, "never", "not defined" or "n/a", with the reason, never as a number such as an
// SNR of 1.9e-61 or a time of 9e+122 h. Sweep grids built by arithmetic are rounded to the digits a
// user can have meant (a bias of 2e-05, not 1.9999999999999998e-05).
#pragma once

#include <fmt/core.h>

#include <algorithm>
#include <cmath>
#include <cstdlib>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "hallway/units.hpp"

namespace hallway::cli {

// |x| at or below this fraction of the scale of the terms it was computed from is rounding residue.
// A sum of a few hundred doubles carries a relative error below 1e-13 (n times the unit roundoff
// 1.1e-16; common practice); 1e-10 leaves a margin of a thousand. An excess noise that small against
// the thermal noise it is read against could not be resolved in any averaging time anyway.
inline constexpr double kResidueFraction = 1e-10;

// Averaging times longer than this are printed as "never": ten years is no measurement (common practice).
inline constexpr double kNeverAfter_s = 10 * 365.25 * 86400.0;

inline bool IsResidue(double x, double scale) {
  return std::abs(x) <= kResidueFraction * std::abs(scale);
}

// The largest magnitude in a matrix: the scale its entries' residue is judged against.
inline double MatrixScale(const std::vector<std::vector<double>>& m) {
  double s = 0.0;
  for (const auto& row : m)
    for (double x : row) s = std::max(s, std::abs(x));
  return s;
}

// x, or exactly 0 when it is residue against `scale` (so that -1e-45 prints as 0).
inline double WithoutResidue(double x, double scale) {
  return IsResidue(x, scale) ? 0.0 : x;
}

// A number derived from `basis` (a signal R^2 S_exc from the excess noise S_exc): 0 when the basis is
// residue against `scale`.
inline double WithoutResidueOf(double derived, double basis, double scale) {
  return IsResidue(basis, scale) ? 0.0 : derived;
}

// A duration in its most readable unit: "41 ms", "12.3 s", "4.36 min", "2.81 h", "3.5 days", "2 years";
// `none` when there is none to give; "never (...)" when longer than kNeverAfter_s or not finite.
inline std::string FormatDuration(const std::optional<double>& t_s, std::string_view none = "no signal") {
  if (!t_s) return std::string(none);
  const double t = *t_s;
  if (!std::isfinite(t) || t > kNeverAfter_s) return "never (over 10 years)";
  if (t < 60.0) return units::FormatSI(t, "s");
  if (t < 3600.0) return fmt::format("{:.3g} min", t / 60.0);
  if (t < 48 * 3600.0) return fmt::format("{:.3g} h", t / 3600.0);
  if (t < 365.25 * 86400.0) return fmt::format("{:.3g} days", t / 86400.0);
  return fmt::format("{:.3g} years", t / (365.25 * 86400.0));
}

// Why a signal is not printed as a number; the same words in every output.
inline constexpr std::string_view kNoSignalReason = "no excess noise beyond rounding residue";

// A signal-to-noise ratio (3 significant digits, as `noise` prints it), "0" when the excess noise it
// is built on is residue against `noise_scale` (the largest total noise of the matrix).
inline std::string FormatSnr(double snr, double excess, double noise_scale) {
  if (IsResidue(excess, noise_scale)) return "0";
  return fmt::format("{:.3g}", snr);
}

// The time for a target when the excess noise may be residue: "never (no excess noise ...)".
inline std::string FormatSignalTime(const std::optional<double>& t_s, double excess, double noise_scale) {
  if (IsResidue(excess, noise_scale)) return "never (" + std::string(kNoSignalReason) + ")";
  return FormatDuration(t_s);
}

// num / den with 4 significant digits, or "not defined (why)" when den is 0 or residue against `scale`
// (|I-/I+| = 1 when I+ is the residue of two opposite streams is no result).
inline std::string FormatRatio(double num, double den, double scale, std::string_view why) {
  if (den == 0.0 || IsResidue(den, scale)) return "not defined (" + std::string(why) + ")";
  return fmt::format("{:.4g}", num / den);
}

// The bare lateral depletion of a gate (docs/models.md "Channel boundaries and slits"): a length only
// when the gate depletes the 2DEG beyond its own edge.
inline std::string FormatLateralDepletion(double width_m, bool depletes) {
  if (!depletes) return "n/a (the gate does not deplete the 2DEG at its design voltage)";
  if (width_m <= 0.0) return "none beyond the gate's edge (V_g between V_dep and 2 V_dep)";
  return units::FormatSI(width_m, "m");
}

// A sweep grid value built by arithmetic (from + step k), rounded to 12 significant digits: the
// rounding error of the arithmetic (a few units in the 16th digit) is removed, and no grid a user can
// give has more digits than that.
inline double RoundGridValue(double x) {
  if (x == 0.0 || !std::isfinite(x)) return x;
  return std::strtod(fmt::format("{:.12g}", x).c_str(), nullptr);
}

}  // namespace hallway::cli
