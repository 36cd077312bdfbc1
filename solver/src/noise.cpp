// Current noise of the edge network and the measurement's signal-to-noise; models in noise.hpp.
#include "hallway/noise.hpp"

#include <Eigen/Dense>
#include <algorithm>
#include <cmath>
#include <complex>
#include <functional>
#include <numbers>
#include <stdexcept>

#include "hallway/collider.hpp"
#include "hallway/fractionalized_collider.hpp"
#include "hallway/constants.hpp"
#include "hallway/paths.hpp"

namespace hallway {

using constants::kBoltzmann_J_per_K;
using constants::kConductanceQuantum_S;
using constants::kElementaryCharge_C;
using constants::kHbar_Js;
using cd = std::complex<double>;

bool NoiseOptions::IsValid(std::string* why) const {
  auto bad = [&](const char* w) {
    if (why) *why = w;
    return false;
  };
  if (phase_samples < 1 || phase_samples > 100000) return bad("phase_samples must lie in [1, 100000]");
  if (loop_phase_rad && !std::isfinite(*loop_phase_rad)) return bad("loop_phase_rad must be finite");
  if (!(target_sigmas > 0.0)) return bad("target_sigmas must be > 0");
  if (!(collider_fano_uncertainty > 0.0)) return bad("collider_fano_uncertainty must be > 0");
  if (!(dilution_limit > 0.0 && dilution_limit < 1.0)) return bad("dilution_limit must lie in (0, 1)");
  if (!(weak_tunnelling_limit > 0.0 && weak_tunnelling_limit < 1.0))
    return bad("weak_tunnelling_limit must lie in (0, 1)");
  return true;
}

double ThermalShotFactor_J(double x, double temperature_K) {
  const double kt = kBoltzmann_J_per_K * temperature_K;
  const double u = x / (2.0 * kt);
  if (std::abs(u) < 1e-6) return 2.0 * kt * (1.0 + u * u / 3.0);
  if (std::abs(u) > 350.0) return std::abs(x);
  return x / std::tanh(u);
}

namespace {

using Mat = Eigen::MatrixXd;
using CMat = Eigen::MatrixXcd;

Mat to_eigen(const Matrix& m) {
  Mat out(static_cast<int>(m.size()), static_cast<int>(m.size()));
  for (std::size_t i = 0; i < m.size(); ++i)
    for (std::size_t j = 0; j < m.size(); ++j) out(static_cast<int>(i), static_cast<int>(j)) = m[i][j];
  return out;
}

Matrix from_eigen(const Mat& m) {
  Matrix out(static_cast<std::size_t>(m.rows()), std::vector<double>(static_cast<std::size_t>(m.cols())));
  for (int i = 0; i < m.rows(); ++i)
    for (int j = 0; j < m.cols(); ++j) out[static_cast<std::size_t>(i)][static_cast<std::size_t>(j)] = m(i, j);
  return out;
}

bool is_integer_channel(const Channel& c) {
  return c.conductance == MakeFraction(1, 1) && c.charge_e == 1.0;
}

// Coherent scattering of the integer channels: inputs are the pieces that contacts emit, outputs the
// pieces that contacts absorb, both over all integer channels (block diagonal by channel).
struct CoherentNetwork {
  const Design& d;
  const EdgeNetwork& net;
  std::vector<int> channels;  // integer channels
  std::vector<int> in_pieces, out_pieces, in_contact, out_contact;
  std::vector<std::optional<PortStep>> steps;  // per piece of an integer channel: its step at a port
  std::vector<char> reach;                      // pieces reachable from an input

  CoherentNetwork(const Design& design, const EdgeNetwork& network) : d(design), net(network) {
    for (std::size_t k = 0; k < d.channels.size(); ++k)
      if (is_integer_channel(d.channels[k])) channels.push_back(static_cast<int>(k));
    for (std::size_t p = 0; p < net.pieces.size(); ++p) {
      const EdgePiece& e = net.pieces[p];
      if (std::find(channels.begin(), channels.end(), e.channel) == channels.end()) continue;
      if (e.from.kind == EdgeEnd::Kind::kContact) {
        in_pieces.push_back(static_cast<int>(p));
        in_contact.push_back(e.from.index);
      }
      if (e.to.kind == EdgeEnd::Kind::kContact) {
        out_pieces.push_back(static_cast<int>(p));
        out_contact.push_back(e.to.index);
      }
    }
    steps.resize(net.pieces.size());
    for (std::size_t p = 0; p < net.pieces.size(); ++p)
      if (std::find(channels.begin(), channels.end(), net.pieces[p].channel) != channels.end())
        steps[p] = StepAtPort(d, net, static_cast<int>(p));
    // Only pieces reachable from an input take part (closed loops that nothing feeds are left out).
    reach = ReachablePieces(d, net, in_pieces, channels);
  }

  // s[out][in] for the given phase of every piece.
  CMat Solve(const std::vector<double>& phase) const {
    const int n = static_cast<int>(net.pieces.size());
    CMat M = CMat::Zero(n, n);
    // The scattering rule (network.hpp) with amplitudes: sqrt(1 - t) back along the same face, i sqrt(t) across.
    for (int p = 0; p < n; ++p) {
      const std::optional<PortStep>& step = steps[static_cast<std::size_t>(p)];
      if (!step) continue;
      const double t = step->transmission;
      const cd carry = std::polar(1.0, phase[static_cast<std::size_t>(p)]);
      M(step->reflected, p) += std::sqrt(1.0 - t) * carry;
      M(step->transmitted, p) += cd(0.0, std::sqrt(t)) * carry;
    }
    std::vector<int> idx, pos(static_cast<std::size_t>(n), -1);
    for (int p = 0; p < n; ++p)
      if (reach[static_cast<std::size_t>(p)]) {
        pos[static_cast<std::size_t>(p)] = static_cast<int>(idx.size());
        idx.push_back(p);
      }
    const int m = static_cast<int>(idx.size());
    CMat A = CMat::Identity(m, m);
    for (int a = 0; a < m; ++a)
      for (int b = 0; b < m; ++b) A(a, b) -= M(idx[static_cast<std::size_t>(a)], idx[static_cast<std::size_t>(b)]);
    CMat E = CMat::Zero(m, static_cast<int>(in_pieces.size()));
    for (std::size_t j = 0; j < in_pieces.size(); ++j)
      E(pos[static_cast<std::size_t>(in_pieces[j])], static_cast<int>(j)) = 1.0;
    const CMat amp = A.fullPivLu().solve(E);
    CMat s = CMat::Zero(static_cast<int>(out_pieces.size()), static_cast<int>(in_pieces.size()));
    for (std::size_t o = 0; o < out_pieces.size(); ++o) {
      const int p = out_pieces[o];
      if (pos[static_cast<std::size_t>(p)] < 0) continue;
      s.row(static_cast<int>(o)) =
          std::polar(1.0, phase[static_cast<std::size_t>(p)]) * amp.row(pos[static_cast<std::size_t>(p)]);
    }
    return s;
  }

  // Büttiker's formula for contact voltages v, temperature T, with the energy integrals in closed form:
  // F_cd = e V_cd coth(e V_cd / 2 k_B T).
  Mat Noise(const CMat& s, const std::vector<double>& v, double temperature_K) const {
    const int nc = static_cast<int>(d.contacts.size());
    Mat F(nc, nc);
    for (int a = 0; a < nc; ++a)
      for (int b = 0; b < nc; ++b)
        F(a, b) = ThermalShotFactor_J(
            kElementaryCharge_C * (v[static_cast<std::size_t>(a)] - v[static_cast<std::size_t>(b)]), temperature_K);
    return Noise(s, F);
  }

  // Büttiker's formula with the occupation factors F_cd (J): the energy integral of
  // f_c (1 - f_d) + f_d (1 - f_c) over the range that s stands for.
  Mat Noise(const CMat& s, const Mat& F) const {
    const int nc = static_cast<int>(d.contacts.size());
    const int nin = static_cast<int>(in_pieces.size());
    std::vector<CMat> B(static_cast<std::size_t>(nc), CMat::Zero(nin, nin));
    for (std::size_t o = 0; o < out_pieces.size(); ++o) {
      const auto row = s.row(static_cast<int>(o));
      B[static_cast<std::size_t>(out_contact[o])] += row.adjoint() * row;
    }
    std::vector<int> n_in(static_cast<std::size_t>(nc), 0);
    for (int c : in_contact) ++n_in[static_cast<std::size_t>(c)];
    Mat S = Mat::Zero(nc, nc);
    for (int a = 0; a < nc; ++a)
      for (int b = 0; b < nc; ++b) {
        double sum = 0.0;
        if (a == b) sum += n_in[static_cast<std::size_t>(a)] * F(a, a);
        for (int i = 0; i < nin; ++i) {
          const int ci = in_contact[static_cast<std::size_t>(i)];
          if (ci == a) sum -= B[static_cast<std::size_t>(b)](i, i).real() * F(a, a);
          if (ci == b) sum -= B[static_cast<std::size_t>(a)](i, i).real() * F(b, b);
          for (int j = 0; j < nin; ++j)
            sum += (B[static_cast<std::size_t>(a)](i, j) * B[static_cast<std::size_t>(b)](j, i)).real() *
                   F(ci, in_contact[static_cast<std::size_t>(j)]);
        }
        S(a, b) = kConductanceQuantum_S * sum;
      }
    return S;
  }
};

}  // namespace

AmplifierNoise AmplifierChain(double gs, const Amplifier& a, double temperature_K, double excess_A2_per_Hz,
                              double target_sigmas) {
  AmplifierNoise an;
  an.load_temperature_from_design = !a.load_temperature_K.has_value();
  an.load_temperature_K = a.load_temperature_K.value_or(temperature_K);
  an.reference_subtraction = a.reference_subtraction;
  const double g_sample = std::max(gs, 0.0), g_load = 1.0 / a.load_Ohm;
  an.sample_resistance_Ohm = gs > 0.0 ? 1.0 / gs : HUGE_VAL;
  an.effective_resistance_Ohm = 1.0 / (g_sample + g_load);
  const double re = an.effective_resistance_Ohm;
  an.excess_current_A2_per_Hz = excess_A2_per_Hz;
  an.signal_V2_per_Hz = re * re * excess_A2_per_Hz;
  // Johnson noise of each resistor, divided by the other: 4 k_B T_s R_s (R_L / (R_s + R_L))^2 =
  // 4 k_B T_s g_s R^2 and 4 k_B T_L R_L (R_s / (R_s + R_L))^2 = 4 k_B T_L g_L R^2 (finite at g_s = 0).
  const double johnson =
      4.0 * kBoltzmann_J_per_K * re * re * (temperature_K * g_sample + an.load_temperature_K * g_load);
  an.floor_V2_per_Hz = a.voltage_noise_V_per_rtHz * a.voltage_noise_V_per_rtHz +
                       re * re * a.current_noise_A_per_rtHz * a.current_noise_A_per_rtHz + johnson;
  an.floor_current_A2_per_Hz = an.floor_V2_per_Hz / (re * re);
  const double total = an.signal_V2_per_Hz + an.floor_V2_per_Hz;
  // On/off: the difference of two averages of equal length has twice the variance of one.
  const double variance_factor = a.reference_subtraction ? 2.0 : 1.0;
  an.snr = std::abs(an.signal_V2_per_Hz) / total * std::sqrt(a.bandwidth_Hz * a.integration_s / variance_factor);
  if (std::abs(an.signal_V2_per_Hz) > 0.0) {
    const double ratio = target_sigmas * total / std::abs(an.signal_V2_per_Hz);
    an.time_for_target_s = variance_factor * ratio * ratio / a.bandwidth_Hz;
  }
  return an;
}

double FractionalPartitionNoise_A2_per_Hz(double charge_C, double voltage_V, double conductance_S, double t,
                                          double temperature_K) {
  const double x = charge_C * std::abs(voltage_V);
  if (x == 0.0) return 0.0;
  const double u = x / (2.0 * kBoltzmann_J_per_K * temperature_K);
  const double bracket = u < 1e-4 ? u / 3.0 : 1.0 / std::tanh(u) - 1.0 / u;
  return 2.0 * x * conductance_S * t * (1.0 - t) * bracket;
}

std::string ToString(ColliderModel m) {
  if (m == ColliderModel::kExactScattering) return "exact-scattering";
  return m == ColliderModel::kZeroTemperature ? "zero-temperature" : "finite-temperature";
}
std::optional<ColliderModel> ColliderModelFromString(const std::string& s) {
  if (s == "zero-temperature") return ColliderModel::kZeroTemperature;
  if (s == "finite-temperature") return ColliderModel::kFiniteTemperature;
  return std::nullopt;
}

namespace {

// The regime of a fractional constriction: the design's, else weak backscattering at every t, so the
// charge does not jump where t crosses 1/2 (docs/models.md "Fractional constriction").
Regime EffectiveRegime(const Constriction& c) {
  return c.regime.value_or(Regime::kWeak);
}

// What arrives at one input of a possible collider (channel k, input piece `in`).
struct Feed {
  int source = -1, contact = -1, source_face = 0;
  double stream_A = 0.0;    // g (mu - 0): the excess current above the grounds
  double dilution = 0.0;    // fraction of the feeding constriction's hot input that the stream carries
  bool equilibrium = true;  // no stream
  std::string problem;      // why this input is not a dilute anyon stream (empty when it is)
};

Feed FeedOf(const Design& d, const EdgeNetwork& net, const TransportResult& tr, int k, int in, double scale_V) {
  const EdgePiece& p = net.pieces[static_cast<std::size_t>(in)];
  const double g = d.channels[static_cast<std::size_t>(k)].conductance.value() * kConductanceQuantum_S;
  const double mu = tr.piece_potential_V[static_cast<std::size_t>(in)];
  Feed f;
  f.stream_A = g * mu;
  f.equilibrium = std::abs(mu) <= 1e-9 * scale_V;
  if (p.from.kind == EdgeEnd::Kind::kContact) {
    f.contact = p.from.index;
    f.dilution = f.equilibrium ? 0.0 : 1.0;
    if (!f.equilibrium)
      f.problem = "its edge comes straight from contact " + d.contacts[static_cast<std::size_t>(p.from.index)].name +
                  " at " + std::to_string(mu * 1e6).substr(0, 7) + " uV: a full edge, not a dilute stream";
    return f;
  }
  f.source = p.from.index;
  f.source_face = p.from.face;
  const Constriction& src = d.constrictions[static_cast<std::size_t>(p.from.index)];
  const ConstrictionPorts ports = PortsOf(net, k, p.from.index);
  double hot = 0.0;
  for (int i : ports.incoming)
    if (i >= 0) hot = std::max(hot, std::abs(tr.piece_potential_V[static_cast<std::size_t>(i)]));
  f.dilution = hot > 0.0 ? std::abs(mu) / hot : 0.0;
  if (!f.equilibrium && EffectiveRegime(src) == Regime::kStrong)
    f.problem = "constriction " + src.name + " is in strong backscattering: its stream carries electrons";
  return f;
}

// Why the collider model cannot give P for this collider, in order of precedence (empty: it can).
std::string NotComputedReason(const Channel& ch, const Feed& a, const Feed& b, const ColliderPrediction& cp) {
  if (!ch.exchange_pi || !ch.scaling || !cp.exchange_below_half_pi)
    return "exchange phase " + (ch.exchange_pi ? std::to_string(*ch.exchange_pi).substr(0, 5) + " pi" : "unknown") +
           ": the sharp-step braiding model of P does not apply above pi/2 (finite anyon width: Thamm & Rosenow, "
           "arXiv:2312.04475; Rosenow & Halperin, arXiv:2510.04319); the collider is not computed";
  if (!(cp.scaling > 0.0 && cp.scaling < 0.5))
    return "scaling dimension outside (0, 1/2): the collider formula does not apply";
  if (!a.problem.empty() || !b.problem.empty())
    return "input " + std::string(a.problem.empty() ? "2: " + b.problem : "1: " + a.problem);
  if (cp.stream_first_A * cp.stream_second_A < 0.0)
    return "the two input streams have opposite signs (one source biased negative): outside the domain of the "
           "formula, which assumes streams of one sign";
  return {};
}

// A possible collider on channel k at constriction q (0 < t < 1): fed on at least one input by the output
// of an upstream constriction that carries a stream, the other input a stream or an edge at equilibrium
// (one-beam partitioning). Nullopt when it is not one: nothing arrives, or two constrictions in series.
// Fills what every collider model shares: feeds, streams, dilution, outputs; `a`, `b` receive the feeds.
std::optional<ColliderPrediction> CandidateCollider(const Design& d, const EdgeNetwork& net, const TransportResult& tr,
                                                    const NoiseOptions& opt, int kk, int qq, double scale, Feed* a,
                                                    Feed* b) {
  const double t = d.constrictions[static_cast<std::size_t>(qq)].transmission[static_cast<std::size_t>(kk)];
  const ConstrictionPorts ports = PortsOf(net, kk, qq);
  const int in0 = ports.incoming[0], in1 = ports.incoming[1];
  if (!(t > 0.0 && t < 1.0) || in0 < 0 || in1 < 0) return std::nullopt;
  auto upstream = [&](int in) {
    const EdgePiece& p = net.pieces[static_cast<std::size_t>(in)];
    return p.from.kind == EdgeEnd::Kind::kConstriction && p.from.index != qq;
  };
  if (!upstream(in0) && !upstream(in1)) return std::nullopt;
  *a = FeedOf(d, net, tr, kk, in0, scale);
  *b = FeedOf(d, net, tr, kk, in1, scale);
  if (a->equilibrium && b->equilibrium) return std::nullopt;  // nothing arrives: no collider at this bias
  // Fed by one upstream constriction only: a one-beam collider when that stream is dilute and the other
  // input is at equilibrium; otherwise two constrictions in series, not a collider.
  if (!(upstream(in0) && upstream(in1))) {
    const Feed& fed = upstream(in0) ? *a : *b;
    const Feed& other = upstream(in0) ? *b : *a;
    if (!other.equilibrium || fed.equilibrium || fed.dilution > opt.dilution_limit) return std::nullopt;
  }
  ColliderPrediction cp;
  cp.constriction = qq;
  cp.channel = kk;
  cp.source_first = a->source;
  cp.source_second = b->source;
  cp.contact_first = a->contact;
  cp.contact_second = b->contact;
  cp.stream_first_A = a->equilibrium ? 0.0 : a->stream_A;
  cp.stream_second_A = b->equilibrium ? 0.0 : b->stream_A;
  cp.dilution_first = a->dilution;
  cp.dilution_second = b->dilution;
  cp.one_beam = a->equilibrium || b->equilibrium;
  cp.i_plus_A = cp.stream_first_A + cp.stream_second_A;
  cp.i_minus_A = cp.stream_first_A - cp.stream_second_A;
  cp.dilute = a->dilution <= opt.dilution_limit && b->dilution <= opt.dilution_limit;
  for (int f = 0; f < 2; ++f) {
    const int o = ports.outgoing[f];
    int best = -1;
    double most = 0.0;
    for (std::size_t x = 0; o >= 0 && x < d.contacts.size(); ++x)
      if (tr.piece_absorption[static_cast<std::size_t>(o)][x] > most) {
        most = tr.piece_absorption[static_cast<std::size_t>(o)][x];
        best = static_cast<int>(x);
      }
    // Output 1 continues input 1 across the gap (face 1), output 2 continues input 2 (face 0).
    (f == 1 ? cp.output_first : cp.output_second) = best;
  }
  return cp;
}

double ContactScale_V(const TransportResult& tr) {
  double scale = 0.0;
  for (const auto& v : tr.voltage_V) scale = std::max(scale, std::abs(v.value_or(0.0)));
  return scale;
}

// The collider model's P and block for a fractional collider that the model's domain allows.
void PredictFractionalCollider(const NoiseOptions& opt, ColliderPrediction& cp) {
  const double theta = cp.exchange_pi * std::numbers::pi;
  const double x = cp.i_minus_A / cp.i_plus_A;  // same signs: |x| <= 1
  const ColliderNoiseShape zero = ColliderShape(x, theta, cp.scaling, HUGE_VAL);
  const ColliderNoiseShape warm = ColliderShape(x, theta, cp.scaling, cp.rate_over_temperature);
  cp.fano = zero.p;
  cp.fano_finite_temperature = warm.p;
  // One beam: the published effect (braiding with thermally excited pairs at the constriction; Lee, Han &
  // Sim, Phys. Rev. Lett. 123, 016803 (2019)) exists only at finite temperature, so that form fills the
  // matrix whatever the option.
  const bool warm_used = opt.collider_model == ColliderModel::kFiniteTemperature || cp.one_beam;
  const ColliderNoiseShape& used = warm_used ? warm : zero;
  cp.model_in_matrix = warm_used ? ColliderModel::kFiniteTemperature : ColliderModel::kZeroTemperature;
  const double unit =
      2.0 * cp.charge_e * kElementaryCharge_C * std::abs(cp.i_plus_A) * cp.tunnelling * (1.0 - cp.tunnelling);
  cp.s34_A2_per_Hz = used.p * unit;
  cp.in_contact_matrix = cp.dilute && cp.weak_tunnelling;
  cp.shape = {used.p * unit, used.s1t * unit, used.s2t * unit, used.stt * unit};
}

// Colliders on fractional channels (CandidateCollider). P is computed where the model's domain allows;
// the collider is put into the contact matrix when both inputs are dilute (or at equilibrium) and it
// tunnels weakly.
std::vector<ColliderPrediction> FindColliders(const Design& d, const EdgeNetwork& net, const TransportResult& tr,
                                              const NoiseOptions& opt, std::vector<Finding>* findings) {
  std::vector<ColliderPrediction> out;
  const double scale = ContactScale_V(tr);
  for (std::size_t k = 0; k < d.channels.size(); ++k) {
    const Channel& ch = d.channels[k];
    if (is_integer_channel(ch)) continue;
    for (std::size_t q = 0; q < d.constrictions.size(); ++q) {
      const Constriction& c = d.constrictions[q];
      Feed a, b;
      std::optional<ColliderPrediction> found =
          CandidateCollider(d, net, tr, opt, static_cast<int>(k), static_cast<int>(q), scale, &a, &b);
      if (!found) continue;
      ColliderPrediction& cp = *found;
      const Regime reg = EffectiveRegime(c);
      const double t = c.transmission[k];
      cp.tunnelling = reg == Regime::kWeak ? 1.0 - t : t;
      cp.charge_e = ch.charge_e;
      cp.exchange_pi = ch.exchange_pi.value_or(0.0);
      cp.scaling = ch.scaling.value_or(0.0);
      cp.weak_tunnelling = reg == Regime::kWeak && cp.tunnelling <= opt.weak_tunnelling_limit;
      cp.exchange_below_half_pi = ch.exchange_pi && *ch.exchange_pi < 0.5;
      if (!ch.note.empty()) cp.caveats.push_back(ch.note);
      cp.not_computed = NotComputedReason(ch, a, b, cp);
      cp.rate_over_temperature = ColliderRateOverTemperature(
          cp.exchange_below_half_pi ? cp.exchange_pi * std::numbers::pi : std::numbers::pi / 2, std::abs(cp.i_plus_A),
          cp.charge_e * kElementaryCharge_C, d.conditions.temperature_K);
      if (cp.not_computed.empty()) PredictFractionalCollider(opt, cp);
      if (!cp.dilute)
        cp.caveats.push_back("an input is not dilute (it carries more than " +
                             std::to_string(static_cast<int>(opt.dilution_limit * 100 + 0.5)) +
                             " % of the bias of its feeding constriction's hot input, common practice): the P "
                             "prediction does not apply and the contact matrix uses the independent partition model");
      if (!cp.weak_tunnelling)
        cp.caveats.push_back("the collider is not in weak tunnelling (tunnelling above " +
                             std::to_string(opt.weak_tunnelling_limit).substr(0, 4) +
                             "): the contact matrix uses the independent partition model");
      if (cp.not_computed.empty() && cp.rate_over_temperature < 1.0)
        cp.caveats.push_back(
            "injection rate below the temperature (zeta = " + std::to_string(cp.rate_over_temperature).substr(0, 5) +
            " < 1): P at the design temperature differs from the T = 0 value; published comparisons with measurements "
            "use the T = 0 form");
      if (!cp.dilute || !cp.not_computed.empty())
        findings->push_back(
            {Severity::kWarning, "collider-not-applicable",
             "collider " + c.name + ": " + (cp.not_computed.empty() ? cp.caveats.back() : cp.not_computed), c.where});
      out.push_back(cp);
    }
  }
  return out;
}

const ColliderPrediction* MatrixColliderAt(const std::vector<ColliderPrediction>& cs, int k, int q) {
  for (const ColliderPrediction& c : cs)
    if (c.in_contact_matrix && c.channel == k && c.constriction == q) return &c;
  return nullptr;
}

// Adds the fractional channels' excess noise to `excess`; returns whether there was any fractional channel.
bool AddFractionalNoise(const Design& d, const EdgeNetwork& net, const TransportResult& tr,
                        const std::vector<ColliderPrediction>& colliders, double temperature, Mat& excess,
                        std::vector<Finding>* findings) {
  const int nc = static_cast<int>(d.contacts.size());
  auto absorb = [&](int piece) {
    Eigen::VectorXd a = Eigen::VectorXd::Zero(nc);
    for (int x = 0; piece >= 0 && x < nc; ++x)
      a(x) = tr.piece_absorption[static_cast<std::size_t>(piece)][static_cast<std::size_t>(x)];
    return a;
  };
  bool any = false;
  for (std::size_t k = 0; k < d.channels.size(); ++k) {
    if (is_integer_channel(d.channels[k])) continue;
    any = true;
    const int kk = static_cast<int>(k);
    const double g = d.channels[k].conductance.value() * kConductanceQuantum_S;
    // The inputs' noise vectors of each matrix collider, filled while the sources are visited.
    std::vector<Eigen::VectorXd> w_in(2 * d.constrictions.size(), Eigen::VectorXd::Zero(nc));
    for (std::size_t q = 0; q < d.constrictions.size(); ++q) {
      const Constriction& c = d.constrictions[q];
      const int qq = static_cast<int>(q);
      const double t = c.transmission[k];
      if (!(t > 0.0 && t < 1.0) || MatrixColliderAt(colliders, kk, qq)) continue;
      const ConstrictionPorts ports = PortsOf(net, kk, qq);
      const int i0 = ports.incoming[0], i1 = ports.incoming[1], o0 = ports.outgoing[0], o1 = ports.outgoing[1];
      if (i0 < 0 || i1 < 0 || o0 < 0 || o1 < 0) continue;
      const double vq = std::abs(tr.piece_potential_V[static_cast<std::size_t>(i0)] -
                                 tr.piece_potential_V[static_cast<std::size_t>(i1)]);
      const bool weak = EffectiveRegime(c) == Regime::kWeak;
      if (!c.regime && t < 0.8 && vq > 0.0)
        findings->push_back(
            {Severity::kWarning, "fractional-charge-uncertain",
             "constriction " + c.name + ": transmission " + std::to_string(t).substr(0, 5) + " of channel " +
                 std::to_string(k + 1) +
                 " lies in the crossover from weak backscattering (charge e*) to electron tunnelling (charge e); "
                 "the noise uses e* throughout; give `regime: strong` for the electron picture (Kane & Fisher, Phys. "
                 "Rev. Lett. 72, 724 (1994))",
             c.where});
      const double charge = (weak ? d.channels[k].charge_e : 1.0) * kElementaryCharge_C;
      const double sq = FractionalPartitionNoise_A2_per_Hz(charge, vq, g, t, temperature);
      // +dI on output o1, -dI on o0; a source of a matrix collider carries its stream's fluctuation
      // across that collider (the collider's own block carries the tunnelling).
      Eigen::VectorXd w = absorb(o1) - absorb(o0);
      for (const ColliderPrediction& cp : colliders) {
        if (!cp.in_contact_matrix || cp.channel != kk) continue;
        for (int input = 0; input < 2; ++input) {
          if ((input == 0 ? cp.source_first : cp.source_second) != qq) continue;
          const ConstrictionPorts at = PortsOf(net, kk, cp.constriction);
          const int self_face = net.pieces[static_cast<std::size_t>(at.incoming[input])].from.face;
          w = absorb(at.outgoing[1 - input]) - absorb(ports.outgoing[1 - self_face]);
          w_in[2 * static_cast<std::size_t>(cp.constriction) + static_cast<std::size_t>(input)] = w;
        }
      }
      excess += sq * w * w.transpose();
    }
    // Each matrix collider: dI_T moves current from output 1 (face 1) to output 2 (face 0);
    // S_1T and S_2T pair it with its inputs' fluctuations, S_TT with itself.
    for (const ColliderPrediction& cp : colliders) {
      if (!cp.in_contact_matrix || cp.channel != kk) continue;
      const ConstrictionPorts at = PortsOf(net, kk, cp.constriction);
      const Eigen::VectorXd wt = absorb(at.outgoing[0]) - absorb(at.outgoing[1]);
      const Eigen::VectorXd& wa = w_in[2 * static_cast<std::size_t>(cp.constriction)];
      const Eigen::VectorXd& wb = w_in[2 * static_cast<std::size_t>(cp.constriction) + 1];
      excess += cp.shape.stt_A2_per_Hz * wt * wt.transpose() +
                cp.shape.s1t_A2_per_Hz * (wa * wt.transpose() + wt * wa.transpose()) +
                cp.shape.s2t_A2_per_Hz * (wb * wt.transpose() + wt * wb.transpose());
    }
  }
  return any;
}

// What the steps of one noise solution share.
struct NoiseSolving {
  const Design& d;
  const EdgeNetwork& net;
  const TransportResult& tr;
  const NoiseOptions& opt;
  int nc = 0;                // contacts
  double temperature = 0.0;  // design temperature, K
  double kt = 0.0;           // k_B T, J
  std::vector<double> v;     // contact voltages (undetermined ones at 0)
  Mat G;                     // conductance matrix, S
  NoiseResult r;
  Mat excess;          // the sources' excess noise with every contact voltage fixed, A^2/Hz
  Mat L;               // from that noise to the measured one (floating contacts eliminated)
  Mat excess_p, eq_p;  // excess and equilibrium noise with floating contacts eliminated, A^2/Hz
};

// The loops of the integer channels' network: their pieces, length, constrictions and enclosed area.
std::vector<CoherentLoop> coherent_loops(const NoiseSolving& ctx, const CoherentNetwork& coherent) {
  const EdgeNetwork& net = ctx.net;
  std::vector<CoherentLoop> loops;
  const auto comps = FindEdgeLoops(ctx.d, net, coherent.channels);
  for (const auto& comp : comps) {
    CoherentLoop loop;
    loop.channel = net.pieces[static_cast<std::size_t>(comp.front())].channel;
    loop.pieces = comp;
    std::vector<geometry::Point> ring;
    for (int p : comp) {
      const EdgePiece& e = net.pieces[static_cast<std::size_t>(p)];
      loop.length_m += e.length_m;
      ring.insert(ring.end(), e.path.begin(), e.path.end());
      for (const EdgeEnd* end : {&e.from, &e.to})
        if (end->kind == EdgeEnd::Kind::kConstriction &&
            std::find(loop.constrictions.begin(), loop.constrictions.end(), end->index) == loop.constrictions.end())
          loop.constrictions.push_back(end->index);
    }
    if (ring.size() >= 3) loop.enclosed_area_m2 = geometry::area(geometry::Polygon{ring});
    loops.push_back(loop);
  }
  return loops;
}

// Phase configuration k: every piece gets phase 2 pi frac(k alpha_p), alpha_p = frac(p sqrt 2 +
// (p + 1) sqrt 3) (a Weyl sequence, equidistributed); with a fixed loop phase, one piece of each
// loop carries the phase and every piece adds its dynamical phase E tau_p / hbar at energy E (J, from
// the Fermi level; `tof` empty: none).
std::vector<double> piece_phases(const NoiseSolving& ctx, const std::vector<CoherentLoop>& loops, int k,
                                 double energy_J = 0.0, const std::vector<double>& tof = {}) {
  std::vector<double> phase(ctx.net.pieces.size(), 0.0);
  if (ctx.opt.loop_phase_rad) {
    for (const CoherentLoop& loop : loops) phase[static_cast<std::size_t>(loop.pieces.front())] = *ctx.opt.loop_phase_rad;
    for (std::size_t p = 0; p < tof.size() && p < phase.size(); ++p) phase[p] += energy_J * tof[p] / kHbar_Js;
  } else if (!loops.empty()) {
    for (std::size_t p = 0; p < phase.size(); ++p) {
      const double alpha = std::fmod(
          static_cast<double>(p) * std::numbers::sqrt2 + static_cast<double>(p + 1) * std::numbers::sqrt3, 1.0);
      phase[p] = 2.0 * std::numbers::pi * std::fmod(static_cast<double>(k) * alpha, 1.0);
    }
  }
  return phase;
}

// The linear-response conductance of scattering matrix s: G_ab = (e^2/h) (M_a d_ab - sum |s_ab|^2).
Mat scattering_conductance(const NoiseSolving& ctx, const CoherentNetwork& coherent, const CMat& s) {
  Mat g_s = Mat::Zero(ctx.nc, ctx.nc);
  for (std::size_t j = 0; j < coherent.in_pieces.size(); ++j) {
    g_s(coherent.in_contact[j], coherent.in_contact[j]) += kConductanceQuantum_S;
    for (std::size_t o = 0; o < coherent.out_pieces.size(); ++o)
      g_s(coherent.out_contact[o], coherent.in_contact[j]) -=
          kConductanceQuantum_S * std::norm(s(static_cast<int>(o), static_cast<int>(j)));
  }
  return g_s;
}

// The identity S_eq = 2 k_B T (G + G^T) holds for each phase configuration (and each energy) with that
// configuration's own conductances g_s: its relative error for the equilibrium noise se.
double equilibrium_identity_error(const NoiseSolving& ctx, const Mat& g_s, const Mat& se) {
  const Mat eq_sample = 2.0 * ctx.kt * (g_s + g_s.transpose());
  const double scale = std::max(1e-300, eq_sample.cwiseAbs().maxCoeff());
  return (se - eq_sample).cwiseAbs().maxCoeff() / scale;
}

// ---- The noise models as units: each returns its contribution; the table at the end composes them ----

// Integer channels: coherent scattering, averaged over the loops' phases (or over energy at the fixed
// loop phase).
struct CoherentContribution {
  bool used = false;  // the design has integer channels that a contact feeds
  Mat excess;         // biased minus equilibrium noise, every contact voltage fixed, A^2/Hz
  Mat conductance;    // linear response of the coherent scattering, S
  std::vector<CoherentLoop> loops;
  bool phase_averaged = false;
  int phase_samples = 1;
  int energy_points = 0;
  double unitarity_error = 0.0, equilibrium_identity_error = 0.0;
  std::vector<Finding> findings;
};

double unitarity_error_of(const CMat& s) {
  if (s.rows() != s.cols()) return 1.0;
  return (s.adjoint() * s - CMat::Identity(s.rows(), s.cols())).cwiseAbs().maxCoeff();
}

// Each piece's time of flight: the options' (EdgeNetwork order) or length / the fixed path velocity.
std::vector<double> piece_times(const NoiseSolving& ctx) {
  const std::vector<double>& given = ctx.opt.piece_time_of_flight_s;
  if (!given.empty()) {
    if (given.size() != ctx.net.pieces.size())
      throw std::invalid_argument("NoiseOptions: piece_time_of_flight_s has " + std::to_string(given.size()) +
                                  " entries; the edge network has " + std::to_string(ctx.net.pieces.size()) + " pieces");
    for (double t : given)
      if (!(t >= 0.0 && std::isfinite(t)))
        throw std::invalid_argument("NoiseOptions: piece_time_of_flight_s must be finite and >= 0; got " +
                                    std::to_string(t));
    return given;
  }
  std::vector<double> out;
  const double v = PathOptions{}.default_velocity_m_per_s;
  for (const EdgePiece& p : ctx.net.pieces) out.push_back(p.length_m / v);
  return out;
}

// Fermi function of energy e relative to mu at k_B T = kt.
double fermi(double e_J, double mu_J, double kt) {
  const double x = std::clamp((e_J - mu_J) / kt, -700.0, 700.0);
  return 1.0 / (1.0 + std::exp(x));
}

// The fixed loop phase: s(E) with each piece's phase E tau / hbar, Büttiker's formula with the
// occupation factors at each energy node (uniform step; the window is the bias window widened by
// 36 k_B T each side, where the integrands are below e^-36 of their peak), and the conductance with
// -df/dE = f (1 - f) / k_B T.
void energy_averaged_noise(const NoiseSolving& ctx, const CoherentNetwork& coherent, CoherentContribution& c) {
  const int nc = ctx.nc;
  const std::vector<double> tof = piece_times(ctx);
  double slowest = 0.0;
  for (const CoherentLoop& loop : c.loops) {
    double t = 0.0;
    for (int p : loop.pieces) t += tof[static_cast<std::size_t>(p)];
    slowest = std::max(slowest, t);
  }
  std::vector<double> mu(static_cast<std::size_t>(nc));
  double lo = 0.0, hi = 0.0;
  for (int a = 0; a < nc; ++a) {
    mu[static_cast<std::size_t>(a)] = -kElementaryCharge_C * ctx.v[static_cast<std::size_t>(a)];  // electrons: -e V
    lo = std::min(lo, mu[static_cast<std::size_t>(a)]);
    hi = std::max(hi, mu[static_cast<std::size_t>(a)]);
  }
  lo -= 36.0 * ctx.kt;
  hi += 36.0 * ctx.kt;
  double step = 0.5 * ctx.kt;
  if (slowest > 0.0) step = std::min(step, 0.3 * kHbar_Js / slowest);
  const int n = ctx.opt.energy_points > 0 ? ctx.opt.energy_points
                                          : static_cast<int>(std::clamp(std::ceil((hi - lo) / step) + 1.0, 65.0, 200001.0));
  step = (hi - lo) / (n - 1);
  c.energy_points = n;
  Mat s_bias = Mat::Zero(nc, nc), s_eq = Mat::Zero(nc, nc);
  c.conductance = Mat::Zero(nc, nc);
  Mat fb(nc, nc), fe(nc, nc);
  for (int k = 0; k < n; ++k) {
    const double e = lo + step * k;
    const CMat s = coherent.Solve(piece_phases(ctx, c.loops, 0, e, tof));
    c.unitarity_error = std::max(c.unitarity_error, unitarity_error_of(s));
    const double f0 = fermi(e, 0.0, ctx.kt);
    for (int a = 0; a < nc; ++a)
      for (int b = 0; b < nc; ++b) {
        const double fa = fermi(e, mu[static_cast<std::size_t>(a)], ctx.kt);
        const double fbb = fermi(e, mu[static_cast<std::size_t>(b)], ctx.kt);
        fb(a, b) = step * (fa * (1.0 - fbb) + fbb * (1.0 - fa));
        fe(a, b) = step * 2.0 * f0 * (1.0 - f0);
      }
    s_bias += coherent.Noise(s, fb);
    s_eq += coherent.Noise(s, fe);
    c.conductance += (step * f0 * (1.0 - f0) / ctx.kt) * scattering_conductance(ctx, coherent, s);
  }
  c.excess = s_bias - s_eq;
  c.equilibrium_identity_error = equilibrium_identity_error(ctx, c.conductance, s_eq);
}

CoherentContribution coherent_noise(const NoiseSolving& ctx) {
  const NoiseOptions& opt = ctx.opt;
  const int nc = ctx.nc;
  CoherentContribution c;
  c.excess = Mat::Zero(nc, nc);
  const CoherentNetwork coherent(ctx.d, ctx.net);
  if (coherent.channels.empty() || coherent.in_pieces.empty()) return c;
  c.used = true;
  c.loops = coherent_loops(ctx, coherent);
  if (!c.loops.empty() && opt.loop_phase_rad) {
    energy_averaged_noise(ctx, coherent, c);
  } else {
    const int samples = c.loops.empty() ? 1 : opt.phase_samples;
    c.phase_averaged = !c.loops.empty();
    c.phase_samples = samples;
    Mat s_bias = Mat::Zero(nc, nc), s_eq = Mat::Zero(nc, nc);
    c.conductance = Mat::Zero(nc, nc);
    for (int k = 0; k < samples; ++k) {
      const CMat s = coherent.Solve(piece_phases(ctx, c.loops, k));
      c.unitarity_error = std::max(c.unitarity_error, unitarity_error_of(s));
      const Mat sb = coherent.Noise(s, ctx.v, ctx.temperature);
      const Mat se = coherent.Noise(s, std::vector<double>(static_cast<std::size_t>(nc), 0.0), ctx.temperature);
      const Mat g_s = scattering_conductance(ctx, coherent, s);
      s_bias += sb / samples;
      s_eq += se / samples;
      c.conductance += g_s / samples;
      c.equilibrium_identity_error = std::max(c.equilibrium_identity_error, equilibrium_identity_error(ctx, g_s, se));
    }
    c.excess = s_bias - s_eq;
  }
  if (c.unitarity_error > 1e-9)
    c.findings.push_back({Severity::kError, "not-unitary",
                          "the composed scattering matrix is not unitary (error " + std::to_string(c.unitarity_error) +
                              "); the noise is not reliable",
                          ctx.d.mesa.where});
  return c;
}

std::optional<std::string> apply_coherent(NoiseSolving& ctx) {
  CoherentContribution c = coherent_noise(ctx);
  if (!c.used) return std::nullopt;
  NoiseResult& r = ctx.r;
  ctx.excess += c.excess;
  r.loops = std::move(c.loops);
  r.phase_averaged = c.phase_averaged;
  r.phase_samples = c.phase_samples;
  r.unitarity_error = c.unitarity_error;
  r.equilibrium_identity_error = c.equilibrium_identity_error;
  r.energy_points = c.energy_points;
  r.coherent_conductance_S = from_eigen(c.conductance);
  r.findings.insert(r.findings.end(), c.findings.begin(), c.findings.end());
  return std::string(
             "integer channels: coherent scattering matrix with Büttiker's multi-terminal formula at finite "
             "temperature (Büttiker, Phys. Rev. B 46, 12485 (1992); docs/models.md \"Coherent noise of integer "
             "channels\"); ") +
         (r.loops.empty()    ? "the network has no loop, so the phases drop out"
          : r.phase_averaged ? "averaged over " + std::to_string(r.phase_samples) + " phase configurations of its loop(s)"
                             : "with the loop phase fixed at " + std::to_string(*ctx.opt.loop_phase_rad) +
                                   " rad at the Fermi level, each edge piece adding E tau / hbar at energy E, "
                                   "averaged over " + std::to_string(r.energy_points) +
                                   " energies at the design temperature (docs/models.md \"Thermal average at a "
                                   "fixed loop phase\")");
}

// Fractional channels: colliders first (they decide how their inputs' noise is carried), then the
// partition noise of every constriction and each matrix collider's own block.
struct FractionalContribution {
  bool used = false;  // the design has fractional channels
  Mat excess;         // every contact voltage fixed, A^2/Hz
  std::vector<ColliderPrediction> colliders;
  std::vector<Finding> findings;
};

FractionalContribution fractional_noise(const NoiseSolving& ctx) {
  FractionalContribution c;
  c.excess = Mat::Zero(ctx.nc, ctx.nc);
  c.colliders = FindColliders(ctx.d, ctx.net, ctx.tr, ctx.opt, &c.findings);
  c.used = AddFractionalNoise(ctx.d, ctx.net, ctx.tr, c.colliders, ctx.temperature, c.excess, &c.findings);
  return c;
}

std::optional<std::string> apply_fractional(NoiseSolving& ctx) {
  FractionalContribution c = fractional_noise(ctx);
  ctx.excess += c.excess;
  ctx.r.colliders = std::move(c.colliders);
  ctx.r.findings.insert(ctx.r.findings.end(), c.findings.begin(), c.findings.end());
  if (!c.used) return std::nullopt;
  return "fractional channels: partition noise at each constriction, 2 e* V g t(1-t)[coth(e*V/2kT) - 2kT/e*V], with "
         "e* of its regime (weak backscattering unless the design says `regime: strong`; Kane & Fisher, Phys. Rev. "
         "Lett. 72, 724 (1994)), carried to the contacts by the incoherent network; a collider in the contact matrix "
         "replaces the splitting of its inputs' noise by its own block (S_34 from P, the rest from current "
         "conservation; docs/models.md \"Anyon collider\")";
}

// Floating contacts and current sources: dI = 0. The map L from the noise of the contacts' currents
// with every voltage fixed to that with the floating contacts eliminated (identity when there are none).
struct FloatingContribution {
  bool any = false;  // some contact is held at dI = 0
  Mat L;
};

FloatingContribution floating_contact_map(const NoiseSolving& ctx) {
  const int nc = ctx.nc;
  const Mat& G = ctx.G;
  std::vector<int> held, fixed;
  for (int i = 0; i < nc; ++i) {
    const Wiring& w = ctx.d.wiring[static_cast<std::size_t>(i)];
    const bool floating = w.role == Role::kFloat || (w.role == Role::kSource && w.current_source);
    (floating && ctx.tr.voltage_V[static_cast<std::size_t>(i)] ? held : fixed).push_back(i);
  }
  FloatingContribution c{!held.empty(), Mat::Identity(nc, nc)};
  if (held.empty()) return c;
  Mat gff(static_cast<int>(held.size()), static_cast<int>(held.size()));
  for (std::size_t a = 0; a < held.size(); ++a)
    for (std::size_t b = 0; b < held.size(); ++b) gff(static_cast<int>(a), static_cast<int>(b)) = G(held[a], held[b]);
  const Mat inv = gff.fullPivLu().inverse();
  c.L = Mat::Zero(nc, nc);
  for (int a : fixed) {
    c.L(a, a) = 1.0;
    for (std::size_t f = 0; f < held.size(); ++f) {
      double x = 0.0;
      for (std::size_t h = 0; h < held.size(); ++h) x += G(a, held[h]) * inv(static_cast<int>(h), static_cast<int>(f));
      c.L(a, held[f]) = -x;
    }
  }
  return c;
}

std::optional<std::string> apply_floating(NoiseSolving& ctx) {
  FloatingContribution c = floating_contact_map(ctx);
  ctx.L = std::move(c.L);
  if (!c.any) return std::nullopt;
  return "floating contacts and current sources conserve current at low frequency (docs/models.md \"Floating "
         "contacts\"); their heating by the bias is not included";
}

const AmplifierNoise* amplifier_at(const std::vector<AmplifierNoise>& amplifiers, int contact) {
  for (const auto& a : amplifiers)
    if (a.contact == contact) return &a;
  return nullptr;
}

// The cross-correlation of amplifiers x and y for a current cross-spectrum s_xy_current: returns the
// signal in V^2/Hz, sets the signal-to-noise and the time to reach target_signal_V2. Cross-spectrum
// error: sqrt((S_xx S_yy + S_xy^2) / (2 df t)) (docs/models.md "Amplifier chain").
double cross_correlation(const NoiseSolving& ctx, const std::vector<AmplifierNoise>& amplifiers, int x, int y,
                         double s_xy_current, double* snr, std::optional<double>* time, double target_signal_V2) {
  const AmplifierNoise* ax = amplifier_at(amplifiers, x);
  const AmplifierNoise* ay = amplifier_at(amplifiers, y);
  const Amplifier& a = *ctx.d.wiring[static_cast<std::size_t>(x)].amplifier;
  const Amplifier& b = *ctx.d.wiring[static_cast<std::size_t>(y)].amplifier;
  const double df = std::min(a.bandwidth_Hz, b.bandwidth_Hz), t = std::min(a.integration_s, b.integration_s);
  const double rr = ax->effective_resistance_Ohm * ay->effective_resistance_Ohm;
  const double sxx = ax->signal_V2_per_Hz + ax->floor_V2_per_Hz, syy = ay->signal_V2_per_Hz + ay->floor_V2_per_Hz;
  const double sxy = rr * (s_xy_current + ctx.eq_p(x, y));
  // On/off measurement at either amplifier: the difference of two averages doubles the variance.
  const double var = (a.reference_subtraction || b.reference_subtraction ? 2.0 : 1.0) * (sxx * syy + sxy * sxy);
  const double signal = rr * s_xy_current;
  *snr = std::abs(signal) / std::sqrt(var / (2.0 * df * t));
  if (std::abs(target_signal_V2) > 0.0) *time = var / (2.0 * df * target_signal_V2 * target_signal_V2);
  return signal;
}

// Amplifiers: each one's chain, and the cross-correlation of every pair. The sample seen from an
// amplifier contact: the other fixed-voltage contacts held at AC ground, floating ones eliminated:
// G' = G_AA - G_AF G_FF^-1 G_FA (the Schur complement).
struct AmplifierContribution {
  std::vector<AmplifierNoise> amplifiers;
  std::vector<CrossNoise> cross;
};

AmplifierContribution amplifier_noise(const NoiseSolving& ctx) {
  const Design& d = ctx.d;
  const NoiseOptions& opt = ctx.opt;
  const Mat& excess_p = ctx.excess_p;
  const Mat Gp = ctx.L * ctx.G * ctx.L.transpose();
  AmplifierContribution c;
  std::vector<int> amps;
  for (int i = 0; i < ctx.nc; ++i)
    if (d.wiring[static_cast<std::size_t>(i)].role == Role::kAmplifier) amps.push_back(i);
  for (int i : amps) {
    AmplifierNoise an = AmplifierChain(Gp(i, i), *d.wiring[static_cast<std::size_t>(i)].amplifier, ctx.temperature,
                                       excess_p(i, i), opt.target_sigmas);
    an.contact = i;
    c.amplifiers.push_back(an);
  }
  for (std::size_t a = 0; a < amps.size(); ++a)
    for (std::size_t b = a + 1; b < amps.size(); ++b) {
      CrossNoise cn;
      cn.first = amps[a];
      cn.second = amps[b];
      cn.excess_current_A2_per_Hz = excess_p(amps[a], amps[b]);
      const double rr = amplifier_at(c.amplifiers, amps[a])->effective_resistance_Ohm *
                        amplifier_at(c.amplifiers, amps[b])->effective_resistance_Ohm;
      cn.signal_V2_per_Hz = cross_correlation(ctx, c.amplifiers, amps[a], amps[b], cn.excess_current_A2_per_Hz,
                                              &cn.snr, &cn.time_for_target_s,
                                              rr * cn.excess_current_A2_per_Hz / opt.target_sigmas);
      c.cross.push_back(cn);
    }
  return c;
}

std::optional<std::string> apply_amplifiers(NoiseSolving& ctx) {
  AmplifierContribution c = amplifier_noise(ctx);
  const bool any = !c.amplifiers.empty();
  ctx.r.amplifiers = std::move(c.amplifiers);
  ctx.r.cross = std::move(c.cross);
  if (!any) return std::nullopt;
  return "amplifier chain: sample in parallel with the load, S_V = R^2 S_I + e_n^2 + R^2 i_n^2 + 4k R^2 (T_s/R_s + "
         "T_L/R_L) with the load at its own temperature; averaging "
         "error S/sqrt(df t) for autocorrelations and sqrt((SxxSyy + Sxy^2)/(2 df t)) for cross-correlations "
         "(Dicke radiometer formula; docs/models.md \"Amplifier chain\")";
}

// Colliders: the time to know each one's P from the drains' cross-correlation (in the order of
// NoiseResult::colliders; nullopt where it cannot be measured).
std::vector<std::optional<double>> collider_measurement_times(const NoiseSolving& ctx) {
  const NoiseResult& r = ctx.r;
  std::vector<std::optional<double>> times;
  for (const ColliderPrediction& cp : r.colliders) {
    std::optional<double>& time = times.emplace_back();
    if (!cp.s34_A2_per_Hz || cp.output_first < 0 || cp.output_second < 0 || cp.output_first == cp.output_second ||
        !amplifier_at(r.amplifiers, cp.output_first) || !amplifier_at(r.amplifiers, cp.output_second))
      continue;
    const double rr = amplifier_at(r.amplifiers, cp.output_first)->effective_resistance_Ohm *
                      amplifier_at(r.amplifiers, cp.output_second)->effective_resistance_Ohm;
    // S_34 per unit of P: 2 e* |I+| T (1 - T) (the normalisation of P for every collider model).
    const double unit =
        2.0 * cp.charge_e * kElementaryCharge_C * std::abs(cp.i_plus_A) * cp.tunnelling * (1.0 - cp.tunnelling);
    double snr = 0.0;
    if (unit > 0.0)
      cross_correlation(ctx, r.amplifiers, cp.output_first, cp.output_second,
                        ctx.excess_p(cp.output_first, cp.output_second), &snr, &time,
                        rr * ctx.opt.collider_fano_uncertainty * unit);
  }
  return times;
}

// Filling 2: the modes along a collider input and where its half pulses stand (edge_modes.hpp), with the
// piece's velocity from its time of flight and the bias of the feeding constriction's hot input.
void pulses_at_input(const NoiseSolving& ctx, const std::vector<double>& tof, int input, const Feed& feed,
                     ColliderPrediction& cp, int which) {
  const EdgePiece& p = ctx.net.pieces[static_cast<std::size_t>(input)];
  const double t = tof[static_cast<std::size_t>(input)];
  if (feed.source < 0 || !(t > 0.0)) return;
  cp.modes[static_cast<std::size_t>(which)] = ModesAlongPiece(ctx.d, ctx.net, input, p.length_m / t);
  if (!cp.modes[static_cast<std::size_t>(which)]) return;
  double hot = 0.0;
  for (int i : PortsOf(ctx.net, cp.channel, feed.source).incoming)
    if (i >= 0) hot = std::max(hot, std::abs(ctx.tr.piece_potential_V[static_cast<std::size_t>(i)]));
  cp.pulses[static_cast<std::size_t>(which)] =
      PulseRegimeOf(PulseDelay_s(p.length_m, *cp.modes[static_cast<std::size_t>(which)]), hot, ctx.temperature,
                    which == 0 ? cp.stream_first_A : cp.stream_second_A);
}

// Above this the zero-temperature, first-order theory of the fractionalized pulses does not hold: k_B T dt/hbar
// or (I/e) dt of an input (fractionalized_collider.hpp asks for both << 1; the bound is our judgement).
constexpr double kPulseTheoryLimit = 0.3;

// Filling 2: what the fractionalized pulses add to P with every input path scaled by `scale`:
// sum_i (I_i / I+) P(X_i) (fractionalized_collider.hpp; docs/models.md "Collider at filling 2: fractionalized
// pulses"); 0 without pulses; nullopt, with the reason in *why, outside the theory's domain.
std::optional<double> fractionalized_part(const ColliderPrediction& cp, double scale, std::string* why) {
  double p = 0.0;
  for (std::size_t i = 0; i < 2; ++i) {
    if (!cp.pulses[i]) continue;
    const PulseRegime& r = *cp.pulses[i];
    const double stream = i == 0 ? cp.stream_first_A : cp.stream_second_A;
    if (stream == 0.0) continue;
    if (scale * r.thermal_ratio > kPulseTheoryLimit || scale * r.injection_ratio > kPulseTheoryLimit) {
      char text[160];
      std::snprintf(text, sizeof text, "k_B T dt/hbar = %.3g and (I/e) dt = %.3g at input %zu", scale * r.thermal_ratio,
                    scale * r.injection_ratio, i + 1);
      *why = std::string("the theory of the fractionalized pulses is at T = 0 and first order in the dilution; ") +
             text + ", not well below 1";
      return std::nullopt;
    }
    p += stream / cp.i_plus_A * Filling2ColliderFano(scale * r.bias_ratio);
  }
  return p;
}

// Colliders on integer channels: the exact scattering of non-interacting electrons is already in the
// contact matrix, so P is read from the drains' cross-correlation, S_34 / (2 e |I+| T (1 - T)) (zero for
// balanced beams at T = 0: docs/models.md "Coherent noise of integer channels"). At filling 2 each input
// also gets the delay between the two half pulses of an injected electron.
std::vector<ColliderPrediction> integer_colliders(const NoiseSolving& ctx, Mat& excess) {
  std::vector<ColliderPrediction> out;
  const std::vector<double> tof = piece_times(ctx);
  const double scale = ContactScale_V(ctx.tr);
  for (std::size_t k = 0; k < ctx.d.channels.size(); ++k) {
    if (!is_integer_channel(ctx.d.channels[k])) continue;
    for (std::size_t q = 0; q < ctx.d.constrictions.size(); ++q) {
      const int kk = static_cast<int>(k), qq = static_cast<int>(q);
      Feed a, b;
      std::optional<ColliderPrediction> found = CandidateCollider(ctx.d, ctx.net, ctx.tr, ctx.opt, kk, qq, scale, &a, &b);
      if (!found) continue;
      ColliderPrediction& cp = *found;
      cp.integer = true;
      cp.tunnelling = ctx.d.constrictions[q].transmission[k];
      cp.charge_e = 1.0;
      cp.exchange_pi = 1.0;
      cp.scaling = 0.5;
      cp.weak_tunnelling = true;  // the exact scattering holds at every transmission
      cp.model_in_matrix = ColliderModel::kExactScattering;
      cp.in_contact_matrix = true;
      const ConstrictionPorts ports = PortsOf(ctx.net, kk, qq);
      pulses_at_input(ctx, tof, ports.incoming[0], a, cp, 0);
      pulses_at_input(ctx, tof, ports.incoming[1], b, cp, 1);
      const int o1 = cp.output_first, o2 = cp.output_second;
      const double unit = 2.0 * kElementaryCharge_C * std::abs(cp.i_plus_A) * cp.tunnelling * (1.0 - cp.tunnelling);
      if (o1 < 0 || o2 < 0 || o1 == o2 || !(unit > 0.0)) {
        cp.not_computed = "its two outputs do not reach two different contacts: no drains' cross-correlation to read "
                          "P from";
      } else {
        // Every contact voltage fixed, as the fractional colliders' blocks. The fractionalized pulses add
        // dS_34 = P_pulses unit to the drains' cross-correlation and take it from their autocorrelations
        // (only the partition term Q of the collider changes; docs/models.md "Collider at filling 2").
        std::string why;
        const std::optional<double> pulses = fractionalized_part(cp, 1.0, &why);
        if (!pulses) {
          cp.not_computed = why;
        } else {
          const double ds = *pulses * unit;
          excess(o1, o2) += ds;
          excess(o2, o1) += ds;
          excess(o1, o1) -= ds;
          excess(o2, o2) -= ds;
          if (cp.pulses[0] || cp.pulses[1]) cp.fano_pulses = *pulses;
          cp.s34_A2_per_Hz = excess(o1, o2);
          cp.fano = cp.fano_finite_temperature = *cp.s34_A2_per_Hz / unit;
          cp.shape.s34_A2_per_Hz = *cp.s34_A2_per_Hz;
        }
      }
      if (!cp.dilute)
        cp.caveats.push_back("an input is not dilute (more than " +
                             std::to_string(static_cast<int>(ctx.opt.dilution_limit * 100 + 0.5)) +
                             " % of its feeding constriction's bias, common practice): P is read from the exact "
                             "scattering but is not the dilute-stream quantity");
      out.push_back(cp);
    }
  }
  return out;
}

// Mean source-to-collider distances of the distance curve: the range designers draw, from a quarter
// micrometre to 20 um (common practice), and the design's own distance.
constexpr double kCurveDistances_m[] = {0.25e-6, 0.5e-6, 0.75e-6, 1e-6, 1.5e-6, 2e-6, 2.5e-6, 3e-6, 4e-6,
                                        5e-6,    6e-6,   7e-6,    8e-6, 10e-6, 12e-6, 15e-6, 20e-6};

// P at mean distance D with every input path scaled by D / (design's mean): the same P where no model
// puts a length into it; at filling 2 the pulse delays scale with D and P is not predicted once the pulses
// separate (docs/models.md "Distance from the sources").
ColliderPrediction::DistancePoint point_at(const NoiseSolving& ctx, const ColliderPrediction& cp, double distance,
                                           double scale, double p_matrix) {
  ColliderPrediction::DistancePoint pt;
  pt.distance_m = distance;
  for (std::size_t i = 0; i < 2; ++i) {
    if (!cp.pulses[i]) continue;
    pt.delay_s = std::max(pt.delay_s.value_or(0.0), scale * cp.pulses[i]->delay_s);
    pt.bias_ratio = std::max(pt.bias_ratio.value_or(0.0), scale * cp.pulses[i]->bias_ratio);
  }
  if (!cp.integer) {
    pt.beyond_relaxation_rule = distance > RelaxationRuleOfThumb_m(ctx.d.conditions.filling);
    pt.fano = p_matrix;
    return pt;
  }
  // The matrix holds the non-interacting part and the pulses' part at the design's distance; only the
  // pulses' part depends on the distance.
  std::string why;
  const std::optional<double> here = fractionalized_part(cp, 1.0, &why), there = fractionalized_part(cp, scale, &why);
  if (!here || !there) {
    pt.why_not = why;
    return pt;
  }
  pt.fano = p_matrix - *here + *there;
  return pt;
}

void distance_curve(const NoiseSolving& ctx, ColliderPrediction& cp) {
  if (!cp.fano || !cp.s34_A2_per_Hz) return;
  const ConstrictionPorts ports = PortsOf(ctx.net, cp.channel, cp.constriction);
  double sum = 0.0;
  int fed = 0;
  for (int i = 0; i < 2; ++i) {
    const double stream = i == 0 ? cp.stream_first_A : cp.stream_second_A;
    if (stream == 0.0 || ports.incoming[static_cast<std::size_t>(i)] < 0) continue;
    sum += ctx.net.pieces[static_cast<std::size_t>(ports.incoming[static_cast<std::size_t>(i)])].length_m;
    ++fed;
  }
  if (fed == 0 || !(sum > 0.0)) return;
  const double mean = sum / fed;
  const double p_matrix =
      cp.model_in_matrix == ColliderModel::kFiniteTemperature ? *cp.fano_finite_temperature : *cp.fano;
  std::vector<double> distances(std::begin(kCurveDistances_m), std::end(kCurveDistances_m));
  distances.push_back(mean);
  std::sort(distances.begin(), distances.end());
  const bool measured = cp.output_first >= 0 && cp.output_second >= 0 && cp.output_first != cp.output_second &&
                        amplifier_at(ctx.r.amplifiers, cp.output_first) &&
                        amplifier_at(ctx.r.amplifiers, cp.output_second);
  for (double dist : distances) {
    ColliderPrediction::DistancePoint pt = point_at(ctx, cp, dist, dist / mean, p_matrix);
    pt.design = dist == mean;
    if (pt.fano && measured) {
      // The drains' cross-correlation with this P in place of the matrix's (the rest of the matrix unchanged).
      const double unit =
          2.0 * cp.charge_e * kElementaryCharge_C * std::abs(cp.i_plus_A) * cp.tunnelling * (1.0 - cp.tunnelling);
      const double sxy = ctx.excess_p(cp.output_first, cp.output_second) + (*pt.fano - p_matrix) * unit;
      double snr = 0.0;
      std::optional<double> unused;
      cross_correlation(ctx, ctx.r.amplifiers, cp.output_first, cp.output_second, sxy, &snr, &unused, 0.0);
      pt.cross_excess_A2_per_Hz = sxy;
      pt.cross_snr = snr;
    }
    cp.distance_curve.push_back(pt);
  }
}

std::optional<std::string> apply_integer_colliders(NoiseSolving& ctx) {
  std::vector<ColliderPrediction> integer = integer_colliders(ctx, ctx.excess);
  if (integer.empty()) return std::nullopt;
  ctx.r.colliders.insert(ctx.r.colliders.end(), integer.begin(), integer.end());
  return "integer colliders: P = S_34 / (2 e |I+| T(1 - T)) read from the drains' cross-correlation of the exact "
         "scattering at the design temperature (docs/models.md \"Coherent noise of integer channels\"); at filling 2 the "
         "delay between the charge and neutral pulses of each input, and the holes the fractionalized pulses leave "
         "in the outer channel add -2 n_h to P and to the drains' block (T = 0, first order in the dilution; "
         "docs/models.md \"Collider at filling 2: fractionalized pulses\")";
}

std::optional<std::string> apply_collider_times(NoiseSolving& ctx) {
  bool fractional = false;
  for (const ColliderPrediction& cp : ctx.r.colliders) fractional = fractional || !cp.integer;
  const std::vector<std::optional<double>> times = collider_measurement_times(ctx);
  for (std::size_t i = 0; i < times.size(); ++i) ctx.r.colliders[i].time_for_fano_s = times[i];
  for (ColliderPrediction& cp : ctx.r.colliders) distance_curve(ctx, cp);
  if (ctx.r.colliders.empty()) return std::nullopt;
  std::string text;
  if (fractional)
    text = "colliders: generalized Fano factor P of Rosenow, Levkivskyi & Halperin, Phys. Rev. Lett. 116, 156802 "
           "(2016), lowest order in the collider tunnelling, at T = 0 and with thermal edge correlators at the design "
           "temperature; the contact matrix uses the " +
           ToString(ctx.opt.collider_model) + " form; S_34 = 2 P e* |I+| T(1 - T) (docs/models.md \"Anyon collider\")";
  return text + (text.empty() ? "colliders: " : "; ") +
         "the time to know P to +-" + std::to_string(ctx.opt.collider_fano_uncertainty).substr(0, 4) +
         " from the drains' cross-correlation, and P against the distance from the sources (docs/models.md "
         "\"Distance from the sources\")";
}

// When a model runs. Sources add to the contacts' excess noise with every voltage fixed; the circuit
// then turns that into the noise measured at the contacts (floating contacts); readouts read it.
enum class Stage { kSource, kCircuit, kReadout };

struct ModelRow {
  NoiseModel model;
  const char* name;          // ToString(model)
  const char* docs_section;  // docs/models.md
  Stage stage;
  // Runs the unit on the solution so far and keeps its contribution; returns what it did (for
  // NoiseResult::models), or nullopt when it had nothing to do in this design.
  std::optional<std::string> (*apply)(NoiseSolving&);
};

// The table of noise models, in the order they run. A new model is a unit above and one row here.
const std::vector<ModelRow>& ModelTable() {
  static const std::vector<ModelRow> table{
      {NoiseModel::kCoherentInteger, "coherent-integer", "Coherent noise of integer channels", Stage::kSource,
       apply_coherent},
      {NoiseModel::kFractionalPartition, "fractional-partition", "Fractional constriction", Stage::kSource,
       apply_fractional},
      {NoiseModel::kIntegerCollider, "integer-collider", "Charge and neutral modes at filling 2", Stage::kSource,
       apply_integer_colliders},
      {NoiseModel::kFloatingContacts, "floating-contacts", "Floating contacts", Stage::kCircuit, apply_floating},
      {NoiseModel::kAmplifierChain, "amplifier-chain", "Amplifier chain", Stage::kReadout, apply_amplifiers},
      {NoiseModel::kCollider, "collider", "Anyon collider", Stage::kReadout, apply_collider_times},
  };
  return table;
}

void run_stage(NoiseSolving& ctx, Stage stage) {
  for (const ModelRow& row : ModelTable())
    if (row.stage == stage)
      if (std::optional<std::string> text = row.apply(ctx))
        ctx.r.models.push_back({row.model, std::move(*text), row.docs_section});
}

}  // namespace

std::string ToString(NoiseModel m) {
  for (const ModelRow& row : ModelTable())
    if (row.model == m) return row.name;
  return "unknown";
}

const std::vector<NoiseModelInfo>& NoiseModels() {
  static const std::vector<NoiseModelInfo> info = [] {
    std::vector<NoiseModelInfo> out;
    for (const ModelRow& row : ModelTable()) out.push_back({row.model, row.name, row.docs_section});
    return out;
  }();
  return info;
}

std::vector<std::string> ModelTexts(const NoiseResult& result) {
  std::vector<std::string> out;
  for (const NoiseModelUse& m : result.models) out.push_back(m.text);
  return out;
}

NoiseResult SolveNoise(const Design& d, const EdgeNetwork& net, const TransportResult& tr, const NoiseOptions& opt) {
  std::string why;
  if (!opt.IsValid(&why)) throw std::invalid_argument("NoiseOptions: " + why);
  const int nc = static_cast<int>(d.contacts.size());
  NoiseSolving ctx{d, net, tr, opt, nc, d.conditions.temperature_K, 0.0, {}, to_eigen(tr.conductance_S), {}, {}, {}, {},
                   {}};
  ctx.kt = kBoltzmann_J_per_K * ctx.temperature;
  NoiseResult& r = ctx.r;
  r.field_T = net.field_T;
  ctx.v.assign(static_cast<std::size_t>(nc), 0.0);
  for (int i = 0; i < nc; ++i)
    ctx.v[static_cast<std::size_t>(i)] = tr.voltage_V[static_cast<std::size_t>(i)].value_or(0.0);
  ctx.excess = Mat::Zero(nc, nc);
  ctx.L = Mat::Identity(nc, nc);

  run_stage(ctx, Stage::kSource);
  const Mat equilibrium = 2.0 * ctx.kt * (ctx.G + ctx.G.transpose());
  run_stage(ctx, Stage::kCircuit);
  ctx.excess_p = ctx.L * ctx.excess * ctx.L.transpose();
  ctx.eq_p = ctx.L * equilibrium * ctx.L.transpose();
  r.excess_A2_per_Hz = from_eigen(ctx.excess_p);
  r.equilibrium_A2_per_Hz = from_eigen(ctx.eq_p);
  r.total_A2_per_Hz = from_eigen(ctx.excess_p + ctx.eq_p);
  run_stage(ctx, Stage::kReadout);
  return std::move(ctx.r);
}

}  // namespace hallway
