// Collider at filling 2 fed by fractionalized pulses; model, derivation and sources in
// fractionalized_collider.hpp (docs/models.md, Collider at filling 2: fractionalized pulses).
#include "hallway/fractionalized_collider.hpp"

#include <algorithm>
#include <cmath>
#include <numbers>
#include <stdexcept>
#include <string>
#include <utility>
#include <vector>

namespace hallway {

namespace {

// [u^j] exp(sum_{n>=1} a_n u^n / n) for j = 0..order, from j e_j = sum_{n=1}^j a_n e_{j-n} (the power
// series of an exponential; a[0] unused).
std::vector<double> ExpSeries(const std::vector<double>& a, int order) {
  std::vector<double> e(order + 1, 0.0);
  e[0] = 1.0;
  for (int j = 1; j <= order; ++j) {
    double sum = 0.0;
    for (int n = 1; n <= j; ++n) sum += a[n] * e[j - n];
    e[j] = sum / j;
  }
  return e;
}

// Schur function s_lambda = det(h_{lambda_i - i + j}) (Jacobi-Trudi), LU with partial pivoting.
double JacobiTrudi(const std::vector<int>& lambda, const std::vector<double>& h, std::vector<double>& work) {
  const int len = static_cast<int>(lambda.size());
  if (len == 0) return 1.0;
  work.assign(static_cast<std::size_t>(len) * len, 0.0);
  auto at = [&work, len](int i, int j) -> double& { return work[static_cast<std::size_t>(i) * len + j]; };
  for (int i = 0; i < len; ++i)
    for (int j = 0; j < len; ++j) {
      const int k = lambda[i] - i + j;
      at(i, j) = (k < 0 || k >= static_cast<int>(h.size())) ? 0.0 : h[k];
    }
  double det = 1.0;
  for (int c = 0; c < len; ++c) {
    int pivot = c;
    for (int r = c + 1; r < len; ++r)
      if (std::fabs(at(r, c)) > std::fabs(at(pivot, c))) pivot = r;
    if (at(pivot, c) == 0.0) return 0.0;
    if (pivot != c) {
      for (int j = 0; j < len; ++j) std::swap(at(c, j), at(pivot, j));
      det = -det;
    }
    det *= at(c, c);
    for (int r = c + 1; r < len; ++r) {
      const double f = at(r, c) / at(c, c);
      if (f != 0.0)
        for (int j = c + 1; j < len; ++j) at(r, j) -= f * at(c, j);
    }
  }
  return det;
}

// Channel-1 sums over the partitions lambda of m: weight s_lambda^2, and that weight times the holes,
// the electrons and the energy of the Maya diagram of |lambda> in the charge-1 sector.
struct PartitionSums {
  double weight = 0.0, holes = 0.0, electrons = 0.0, energy = 0.0;
};

// Charge-1 sector, levels (k - 1/2) Delta, ground state filling k <= 1: the i-th particle (i = 0, 1, ...)
// of |lambda> sits at k = lambda_i - i + 1. Electrons: filled k >= 1; holes: empty k <= 0.
void AddMaya(const std::vector<int>& lambda, double w, PartitionSums& sums) {
  const int len = static_cast<int>(lambda.size());
  int electrons = 0;
  double energy = 0.0;
  std::vector<int> filled_below;  // filled levels k <= 0 down to -len (deeper ones are all filled)
  for (int i = 0; i <= len; ++i) {
    const int k = (i < len ? lambda[i] : 0) - i + 1;
    if (k >= 1) {
      ++electrons;
      energy += k - 0.5;
    } else {
      filled_below.push_back(k);
    }
  }
  // Levels k in [-len + 1, 0] not listed as filled are holes; below -len + 1 every level is filled.
  int holes = 0;
  for (int k = -len + 1; k <= 0; ++k)
    if (std::find(filled_below.begin(), filled_below.end(), k) == filled_below.end()) {
      ++holes;
      energy += 0.5 - k;
    }
  sums.weight += w;
  sums.electrons += w * electrons;
  sums.holes += w * holes;
  sums.energy += w * energy;
}

void SumPartitions(std::vector<int>& lambda, int remaining, int largest, const std::vector<double>& h,
                   std::vector<double>& work, PartitionSums& sums) {
  if (remaining == 0) {
    const double s = JacobiTrudi(lambda, h, work);
    AddMaya(lambda, s * s, sums);
    return;
  }
  for (int part = std::min(remaining, largest); part >= 1; --part) {
    lambda.push_back(part);
    SumPartitions(lambda, remaining - part, part, h, work, sums);
    lambda.pop_back();
  }
}

}  // namespace

FractionalizationSample FractionalizedHolesFiniteSize(int levels, double x) {
  if (levels < 1 || levels > 80)
    throw std::invalid_argument("fractionalized collider: levels p = " + std::to_string(levels) +
                                " must lie in [1, 80]");
  if (!(x >= 0.0) || !std::isfinite(x))
    throw std::invalid_argument("fractionalized collider: x = " + std::to_string(x) + " must be finite and >= 0");
  const int total = levels - 1;  // boson excitation shared by the two channels
  std::vector<double> cosine(total + 1, 0.0), sine2(total + 1, 0.0), cosine2(total + 1, 0.0);
  for (int n = 1; n <= total; ++n) {
    const double theta = n * x / (2.0 * levels - 1.0);
    cosine[n] = std::cos(theta);
    cosine2[n] = cosine[n] * cosine[n];
    sine2[n] = std::sin(theta) * std::sin(theta);
  }
  const std::vector<double> h = ExpSeries(cosine, total);      // complete symmetric h_j(c)
  const std::vector<double> w2 = ExpSeries(sine2, total);      // channel-2 weight per energy
  const std::vector<double> cauchy = ExpSeries(cosine2, total);  // sum_lambda s_lambda^2 per energy
  FractionalizationSample out;
  out.levels = levels;
  out.x = x;
  std::vector<int> lambda;
  std::vector<double> work;
  for (int m = 0; m <= total; ++m) {
    PartitionSums sums;
    SumPartitions(lambda, m, m, h, work, sums);
    const double w = w2[total - m];
    out.norm += w * sums.weight;
    out.holes += w * sums.holes;
    out.electrons += w * sums.electrons;
    out.energy_channel1 += w * sums.energy;
    out.cauchy_deviation = std::max(out.cauchy_deviation, std::fabs(sums.weight - cauchy[m]));
  }
  return out;
}

FractionalizationEstimate FractionalizedHolesExtrapolated(double x, const std::vector<int>& levels) {
  if (levels.size() < 2 || !std::is_sorted(levels.begin(), levels.end()) ||
      std::adjacent_find(levels.begin(), levels.end()) != levels.end())
    throw std::invalid_argument("fractionalized collider: extrapolation needs at least 2 distinct ascending p");
  FractionalizationEstimate est;
  std::vector<double> value;
  for (int p : levels) {
    est.samples.push_back(FractionalizedHolesFiniteSize(p, x));
    value.push_back(est.samples.back().holes);
  }
  // value(p) = v_inf + c / p_eff^2 with p_eff = p - 1/2 (eps / Delta).
  auto richardson = [&](std::size_t i) {
    const double a = (levels[i] - 0.5) * (levels[i] - 0.5), b = (levels[i + 1] - 0.5) * (levels[i + 1] - 0.5);
    return (b * value[i + 1] - a * value[i]) / (b - a);
  };
  const std::size_t last = levels.size() - 2;
  est.holes = richardson(last);
  est.error = levels.size() >= 3 ? std::fabs(est.holes - richardson(last - 1)) : std::fabs(est.holes - value.back());
  return est;
}

// ---- Runtime table ----

namespace {

struct HolesNode {
  double x, holes, error;
};

// n_h(x) made by tools/fractionalization_table.cpp (about 7 minutes on one core):
//   cmake --build <dir> --target hallway_fractionalization_table
//   <dir>/solver/hallway_fractionalization_table 30 40 50
// Finite-size bosonization at p = 30, 40, 50 levels (eps = (p - 1/2) Delta), Richardson-extrapolated in
// 1/p^2 from p = 40 and 50; the third column is |that extrapolation - the one from p = 30 and 40| (at most
// 5e-4, at x = 60; an extrapolation from p = 50 and 60 differs from the table by 1.5e-4 there).
// Columns: x, n_h(x), error estimate. Grid: 0 to 60 in steps of 0.25.
constexpr HolesNode kHolesTable[] = {
    {0.00, 0.0000000000e+00, 0.0e+00},
    {0.25, 2.5378382831e-06, 6.7e-13},
    {0.50, 4.0352376863e-05, 1.0e-11},
    {0.75, 2.0216605785e-04, 4.8e-11},
    {1.00, 6.2968644107e-04, 1.4e-10},
    {1.25, 1.5087251347e-03, 2.9e-10},
    {1.50, 3.0574709311e-03, 4.9e-10},
    {1.75, 5.5125765216e-03, 6.9e-10},
    {2.00, 9.1138420039e-03, 7.7e-10},
    {2.25, 1.4088358829e-02, 5.9e-10},
    {2.50, 2.0635010420e-02, 8.4e-11},
    {2.75, 2.8910208649e-02, 1.5e-09},
    {3.00, 3.9015679700e-02, 3.9e-09},
    {3.25, 5.0989002142e-02, 7.6e-09},
    {3.50, 6.4797450617e-02, 1.3e-08},
    {3.75, 8.0335518530e-02, 1.9e-08},
    {4.00, 9.7426292609e-02, 2.8e-08},
    {4.25, 1.1582664223e-01, 3.7e-08},
    {4.50, 1.3523597854e-01, 4.8e-08},
    {4.75, 1.5530814415e-01, 5.9e-08},
    {5.00, 1.7566582398e-01, 7.1e-08},
    {5.25, 1.9591673140e-01, 8.1e-08},
    {5.50, 2.1567072795e-01, 9.0e-08},
    {5.75, 2.3455698503e-01, 9.8e-08},
    {6.00, 2.5224029517e-01, 1.0e-07},
    {6.25, 2.6843568685e-01, 1.0e-07},
    {6.50, 2.8292059040e-01, 1.0e-07},
    {6.75, 2.9554393459e-01, 9.9e-08},
    {7.00, 3.0623171992e-01, 9.3e-08},
    {7.25, 3.1498880325e-01, 8.7e-08},
    {7.50, 3.2189683104e-01, 8.2e-08},
    {7.75, 3.2710846211e-01, 7.9e-08},
    {8.00, 3.3083821608e-01, 8.1e-08},
    {8.25, 3.3335045820e-01, 9.0e-08},
    {8.50, 3.3494517723e-01, 1.1e-07},
    {8.75, 3.3594232188e-01, 1.4e-07},
    {9.00, 3.3666552769e-01, 1.8e-07},
    {9.25, 3.3742608669e-01, 2.3e-07},
    {9.50, 3.3850798722e-01, 3.0e-07},
    {9.75, 3.4015478051e-01, 3.7e-07},
    {10.00, 3.4255892158e-01, 4.6e-07},
    {10.25, 3.4585408780e-01, 5.6e-07},
    {10.50, 3.5011081055e-01, 6.5e-07},
    {10.75, 3.5533557079e-01, 7.5e-07},
    {11.00, 3.6147332019e-01, 8.5e-07},
    {11.25, 3.6841320540e-01, 9.4e-07},
    {11.50, 3.7599710402e-01, 1.0e-06},
    {11.75, 3.8403043676e-01, 1.1e-06},
    {12.00, 3.9229460775e-01, 1.1e-06},
    {12.25, 4.0056035048e-01, 1.1e-06},
    {12.50, 4.0860122344e-01, 1.1e-06},
    {12.75, 4.1620650864e-01, 1.1e-06},
    {13.00, 4.2319281642e-01, 1.1e-06},
    {13.25, 4.2941378789e-01, 1.1e-06},
    {13.50, 4.3476740655e-01, 1.1e-06},
    {13.75, 4.3920057509e-01, 1.1e-06},
    {14.00, 4.4271077492e-01, 1.1e-06},
    {14.25, 4.4534479367e-01, 1.1e-06},
    {14.50, 4.4719467125e-01, 1.2e-06},
    {14.75, 4.4839116840e-01, 1.3e-06},
    {15.00, 4.4909519471e-01, 1.4e-06},
    {15.25, 4.4948773820e-01, 1.6e-06},
    {15.50, 4.4975891125e-01, 1.9e-06},
    {15.75, 4.5009676346e-01, 2.1e-06},
    {16.00, 4.5067651000e-01, 2.4e-06},
    {16.25, 4.5165078537e-01, 2.8e-06},
    {16.50, 4.5314145930e-01, 3.1e-06},
    {16.75, 4.5523344940e-01, 3.5e-06},
    {17.00, 4.5797084038e-01, 3.8e-06},
    {17.25, 4.6135547905e-01, 4.1e-06},
    {17.50, 4.6534806783e-01, 4.4e-06},
    {17.75, 4.6987163381e-01, 4.7e-06},
    {18.00, 4.7481711554e-01, 4.9e-06},
    {18.25, 4.8005069219e-01, 5.0e-06},
    {18.50, 4.8542238665e-01, 5.1e-06},
    {18.75, 4.9077540983e-01, 5.1e-06},
    {19.00, 4.9595568188e-01, 5.1e-06},
    {19.25, 5.0082096753e-01, 5.1e-06},
    {19.50, 5.0524909755e-01, 5.0e-06},
    {19.75, 5.0914481268e-01, 5.0e-06},
    {20.00, 5.1244485729e-01, 5.0e-06},
    {20.25, 5.1512106022e-01, 5.0e-06},
    {20.50, 5.1718126438e-01, 5.2e-06},
    {20.75, 5.1866809595e-01, 5.4e-06},
    {21.00, 5.1965569168e-01, 5.7e-06},
    {21.25, 5.2024462103e-01, 6.1e-06},
    {21.50, 5.2055534142e-01, 6.7e-06},
    {21.75, 5.2072060550e-01, 7.3e-06},
    {22.00, 5.2087729257e-01, 8.0e-06},
    {22.25, 5.2115816160e-01, 8.8e-06},
    {22.50, 5.2168401817e-01, 9.7e-06},
    {22.75, 5.2255675368e-01, 1.1e-05},
    {23.00, 5.2385365462e-01, 1.1e-05},
    {23.25, 5.2562329668e-01, 1.2e-05},
    {23.50, 5.2788323839e-01, 1.3e-05},
    {23.75, 5.3061961748e-01, 1.4e-05},
    {24.00, 5.3378863840e-01, 1.4e-05},
    {24.25, 5.3731982629e-01, 1.5e-05},
    {24.50, 5.4112081989e-01, 1.5e-05},
    {24.75, 5.4508338797e-01, 1.5e-05},
    {25.00, 5.4909028620e-01, 1.5e-05},
    {25.25, 5.5302252822e-01, 1.5e-05},
    {25.50, 5.5676662699e-01, 1.5e-05},
    {25.75, 5.6022137230e-01, 1.5e-05},
    {26.00, 5.6330374560e-01, 1.5e-05},
    {26.25, 5.6595363164e-01, 1.5e-05},
    {26.50, 5.6813706470e-01, 1.5e-05},
    {26.75, 5.6984783935e-01, 1.6e-05},
    {27.00, 5.7110741694e-01, 1.6e-05},
    {27.25, 5.7196316233e-01, 1.7e-05},
    {27.50, 5.7248504542e-01, 1.8e-05},
    {27.75, 5.7276103205e-01, 1.9e-05},
    {28.00, 5.7289146407e-01, 2.0e-05},
    {28.25, 5.7298278433e-01, 2.2e-05},
    {28.50, 5.7314099625e-01, 2.4e-05},
    {28.75, 5.7346525730e-01, 2.5e-05},
    {29.00, 5.7404199120e-01, 2.7e-05},
    {29.25, 5.7493986669e-01, 2.9e-05},
    {29.50, 5.7620593254e-01, 3.0e-05},
    {29.75, 5.7786312457e-01, 3.2e-05},
    {30.00, 5.7990927404e-01, 3.3e-05},
    {30.25, 5.8231765419e-01, 3.4e-05},
    {30.50, 5.8503900811e-01, 3.5e-05},
    {30.75, 5.8800491251e-01, 3.6e-05},
    {31.00, 5.9113225321e-01, 3.6e-05},
    {31.25, 5.9432852434e-01, 3.7e-05},
    {31.50, 5.9749761751e-01, 3.7e-05},
    {31.75, 6.0054574260e-01, 3.7e-05},
    {32.00, 6.0338711882e-01, 3.7e-05},
    {32.25, 6.0594909411e-01, 3.6e-05},
    {32.50, 6.0817639020e-01, 3.7e-05},
    {32.75, 6.1003422834e-01, 3.7e-05},
    {33.00, 6.1151016166e-01, 3.8e-05},
    {33.25, 6.1261452142e-01, 3.9e-05},
    {33.50, 6.1337946955e-01, 4.0e-05},
    {33.75, 6.1385673475e-01, 4.2e-05},
    {34.00, 6.1411418818e-01, 4.4e-05},
    {34.25, 6.1423148330e-01, 4.6e-05},
    {34.50, 6.1429503791e-01, 4.9e-05},
    {34.75, 6.1439267300e-01, 5.2e-05},
    {35.00, 6.1460823946e-01, 5.5e-05},
    {35.25, 6.1501655993e-01, 5.8e-05},
    {35.50, 6.1567898987e-01, 6.2e-05},
    {35.75, 6.1663985984e-01, 6.5e-05},
    {36.00, 6.1792400431e-01, 6.7e-05},
    {36.25, 6.1953551316e-01, 7.0e-05},
    {36.50, 6.2145776610e-01, 7.2e-05},
    {36.75, 6.2365473121e-01, 7.3e-05},
    {37.00, 6.2607343198e-01, 7.4e-05},
    {37.25, 6.2864741743e-01, 7.5e-05},
    {37.50, 6.3130101071e-01, 7.6e-05},
    {37.75, 6.3395406704e-01, 7.6e-05},
    {38.00, 6.3652694407e-01, 7.6e-05},
    {38.25, 6.3894537854e-01, 7.6e-05},
    {38.50, 6.4114497273e-01, 7.6e-05},
    {38.75, 6.4307502129e-01, 7.6e-05},
    {39.00, 6.4470145301e-01, 7.6e-05},
    {39.25, 6.4600871849e-01, 7.8e-05},
    {39.50, 6.4700052124e-01, 7.9e-05},
    {39.75, 6.4769936153e-01, 8.2e-05},
    {40.00, 6.4814493512e-01, 8.4e-05},
    {40.25, 6.4839149857e-01, 8.8e-05},
    {40.50, 6.4850437438e-01, 9.2e-05},
    {40.75, 6.4855582015e-01, 9.7e-05},
    {41.00, 6.4862052162e-01, 1.0e-04},
    {41.25, 6.4877099009e-01, 1.1e-04},
    {41.50, 6.4907314666e-01, 1.1e-04},
    {41.75, 6.4958236159e-01, 1.2e-04},
    {42.00, 6.5034018597e-01, 1.2e-04},
    {42.25, 6.5137196770e-01, 1.3e-04},
    {42.50, 6.5268548796e-01, 1.3e-04},
    {42.75, 6.5427068987e-01, 1.3e-04},
    {43.00, 6.5610050387e-01, 1.4e-04},
    {43.25, 6.5813270686e-01, 1.4e-04},
    {43.50, 6.6031268974e-01, 1.4e-04},
    {43.75, 6.6257695377e-01, 1.4e-04},
    {44.00, 6.6485711330e-01, 1.4e-04},
    {44.25, 6.6708415428e-01, 1.4e-04},
    {44.50, 6.6919268439e-01, 1.4e-04},
    {44.75, 6.7112491469e-01, 1.4e-04},
    {45.00, 6.7283413126e-01, 1.4e-04},
    {45.25, 6.7428744959e-01, 1.4e-04},
    {45.50, 6.7546769048e-01, 1.4e-04},
    {45.75, 6.7637427164e-01, 1.5e-04},
    {46.00, 6.7702307071e-01, 1.5e-04},
    {46.25, 6.7744527907e-01, 1.6e-04},
    {46.50, 6.7768532707e-01, 1.6e-04},
    {46.75, 6.7779801795e-01, 1.7e-04},
    {47.00, 6.7784505433e-01, 1.7e-04},
    {47.25, 6.7789117682e-01, 1.8e-04},
    {47.50, 6.7800015570e-01, 1.9e-04},
    {47.75, 6.7823088337e-01, 2.0e-04},
    {48.00, 6.7863380626e-01, 2.1e-04},
    {48.25, 6.7924791201e-01, 2.1e-04},
    {48.50, 6.8009845128e-01, 2.2e-04},
    {48.75, 6.8119552679e-01, 2.3e-04},
    {49.00, 6.8253362751e-01, 2.3e-04},
    {49.25, 6.8409212737e-01, 2.4e-04},
    {49.50, 6.8583670824e-01, 2.4e-04},
    {49.75, 6.8772161067e-01, 2.4e-04},
    {50.00, 6.8969256600e-01, 2.4e-04},
    {50.25, 6.9169022307e-01, 2.4e-04},
    {50.50, 6.9365385409e-01, 2.4e-04},
    {50.75, 6.9552510918e-01, 2.4e-04},
    {51.00, 6.9725158843e-01, 2.4e-04},
    {51.25, 6.9879001353e-01, 2.4e-04},
    {51.50, 7.0010880789e-01, 2.5e-04},
    {51.75, 7.0118993211e-01, 2.5e-04},
    {52.00, 7.0202986915e-01, 2.5e-04},
    {52.25, 7.0263970638e-01, 2.6e-04},
    {52.50, 7.0304431810e-01, 2.6e-04},
    {52.75, 7.0328070712e-01, 2.7e-04},
    {53.00, 7.0339561519e-01, 2.8e-04},
    {53.25, 7.0344255609e-01, 2.9e-04},
    {53.50, 7.0347845909e-01, 3.1e-04},
    {53.75, 7.0356013308e-01, 3.2e-04},
    {54.00, 7.0374077029e-01, 3.3e-04},
    {54.25, 7.0406670463e-01, 3.4e-04},
    {54.50, 7.0457462165e-01, 3.5e-04},
    {54.75, 7.0528938788e-01, 3.6e-04},
    {55.00, 7.0622262759e-01, 3.7e-04},
    {55.25, 7.0737212778e-01, 3.8e-04},
    {55.50, 7.0872210082e-01, 3.9e-04},
    {55.75, 7.1024428090e-01, 3.9e-04},
    {56.00, 7.1189977942e-01, 4.0e-04},
    {56.25, 7.1364157839e-01, 4.0e-04},
    {56.50, 7.1541750288e-01, 4.0e-04},
    {56.75, 7.1717348506e-01, 4.0e-04},
    {57.00, 7.1885691655e-01, 4.0e-04},
    {57.25, 7.2041988158e-01, 4.0e-04},
    {57.50, 7.2182207317e-01, 4.0e-04},
    {57.75, 7.2303321511e-01, 4.0e-04},
    {58.00, 7.2403484499e-01, 4.0e-04},
    {58.25, 7.2482135380e-01, 4.1e-04},
    {58.50, 7.2540022433e-01, 4.2e-04},
    {58.75, 7.2579146052e-01, 4.3e-04},
    {59.00, 7.2602624970e-01, 4.4e-04},
    {59.25, 7.2614494653e-01, 4.5e-04},
    {59.50, 7.2619450863e-01, 4.7e-04},
    {59.75, 7.2622554648e-01, 4.9e-04},
    {60.00, 7.2628917253e-01, 5.0e-04},
};

constexpr double kAsymptoticSlope = 2.0 / (std::numbers::pi * std::numbers::pi);  // d n_h / d ln x, x >> 1
constexpr double kStepPeriod = 2.0 * std::numbers::pi;  // n_h rises in steps near x = 2 pi k

// Monotone cubic Hermite interpolation (Fritsch & Carlson, SIAM J. Numer. Anal. 17, 238 (1980)) with its
// exact integrals; beyond the table the large-x form a2 ln x + a + b / x (a2 = 2/pi^2), a the table's mean
// over its last step period, b making it continuous at the end (the steps' amplitude falls as 1/x).
class HolesInterpolant {
 public:
  HolesInterpolant() {
    const std::size_t n = std::size(kHolesTable);
    for (const HolesNode& node : kHolesTable) {
      x_.push_back(node.x);
      y_.push_back(node.holes);
    }
    std::vector<double> secant(n - 1);
    for (std::size_t i = 0; i + 1 < n; ++i) secant[i] = (y_[i + 1] - y_[i]) / (x_[i + 1] - x_[i]);
    d_.assign(n, 0.0);  // d_0 = 0: n_h grows as x^4 at small x
    for (std::size_t i = 1; i + 1 < n; ++i) {
      if (secant[i - 1] * secant[i] <= 0.0) continue;
      const double h0 = x_[i] - x_[i - 1], h1 = x_[i + 1] - x_[i];
      const double w1 = 2.0 * h1 + h0, w2 = h1 + 2.0 * h0;
      d_[i] = (w1 + w2) / (w1 / secant[i - 1] + w2 / secant[i]);
    }
    d_[n - 1] = secant[n - 2];
    cumulative_.assign(n, 0.0);
    for (std::size_t i = 0; i + 1 < n; ++i) cumulative_[i + 1] = cumulative_[i] + PieceIntegral(i, 1.0);
    // a: mean of n_h - a2 ln x over the last period 2 pi of the steps; b: continuity at the table's end.
    const double xe = x_.back(), xs = xe - kStepPeriod;
    const double log_integral = xe * std::log(xe) - xe - (xs * std::log(xs) - xs);
    a_ = (cumulative_.back() - Integral(xs) - kAsymptoticSlope * log_integral) / kStepPeriod;
    b_ = xe * (y_.back() - kAsymptoticSlope * std::log(xe) - a_);
  }
  double End() const { return x_.back(); }
  double Value(double x) const {
    if (x >= End()) return kAsymptoticSlope * std::log(x) + a_ + b_ / x;
    const std::size_t i = Piece(x);
    const double h = x_[i + 1] - x_[i], s = (x - x_[i]) / h;
    const double h00 = (1.0 + 2.0 * s) * (1.0 - s) * (1.0 - s), h10 = s * (1.0 - s) * (1.0 - s);
    const double h01 = s * s * (3.0 - 2.0 * s), h11 = s * s * (s - 1.0);
    return h00 * y_[i] + h * h10 * d_[i] + h01 * y_[i + 1] + h * h11 * d_[i + 1];
  }
  // Int_0^x n_h.
  double Integral(double x) const {
    if (x >= End()) {
      const double xe = End();
      return cumulative_.back() + kAsymptoticSlope * (x * std::log(x) - x - xe * std::log(xe) + xe) +
             a_ * (x - xe) + b_ * std::log(x / xe);
    }
    const std::size_t i = Piece(x);
    return cumulative_[i] + PieceIntegral(i, (x - x_[i]) / (x_[i + 1] - x_[i]));
  }

 private:
  std::size_t Piece(double x) const {
    const auto it = std::upper_bound(x_.begin(), x_.end(), x);
    return static_cast<std::size_t>(std::max<std::ptrdiff_t>(it - x_.begin() - 1, 0));
  }
  // Int over the first fraction s of piece i of the Hermite cubic.
  double PieceIntegral(std::size_t i, double s) const {
    const double h = x_[i + 1] - x_[i], s2 = s * s, s3 = s2 * s, s4 = s3 * s;
    const double a00 = s4 / 2.0 - s3 + s, a10 = s4 / 4.0 - 2.0 * s3 / 3.0 + s2 / 2.0;
    const double a01 = -s4 / 2.0 + s3, a11 = s4 / 4.0 - s3 / 3.0;
    return h * (a00 * y_[i] + h * a10 * d_[i] + a01 * y_[i + 1] + h * a11 * d_[i + 1]);
  }
  std::vector<double> x_, y_, d_, cumulative_;
  double a_ = 0.0, b_ = 0.0;
};

const HolesInterpolant& Interpolant() {
  static const HolesInterpolant interpolant;
  return interpolant;
}

void CheckArgument(double value, const char* name) {
  if (!(value >= 0.0) || !std::isfinite(value))
    throw std::invalid_argument(std::string("fractionalized collider: ") + name + " = " + std::to_string(value) +
                                " must be finite and >= 0");
}

}  // namespace

double FractionalizationTableEnd() { return Interpolant().End(); }

double HolesPerInjectedElectron(double x) {
  CheckArgument(x, "x = eps delta_t / hbar");
  return Interpolant().Value(x);
}

double Filling2ColliderFano(double bias_delay_ratio) {
  CheckArgument(bias_delay_ratio, "X = e V delta_t / hbar");
  if (bias_delay_ratio == 0.0) return 0.0;  // no holes below x = 0: the limit of -2 nbar_h
  return -2.0 * Interpolant().Integral(bias_delay_ratio) / bias_delay_ratio;
}

}  // namespace hallway
