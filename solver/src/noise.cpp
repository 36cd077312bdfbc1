// Current noise of the edge network and the measurement's signal-to-noise; models in noise.hpp.
#include "hallway/noise.hpp"

#include <Eigen/Dense>
#include <cmath>
#include <complex>
#include <functional>
#include <numbers>
#include <stdexcept>

#include "hallway/collider.hpp"
#include "hallway/constants.hpp"

namespace hallway {

using constants::kBoltzmann_J_per_K;
using constants::kConductanceQuantum_S;
using constants::kElementaryCharge_C;
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

int out_piece(const EdgeNetwork& net, int channel, int constriction, int face) {
  return PortPiece(net, channel, constriction, face, true);
}
int in_piece(const EdgeNetwork& net, int channel, int constriction, int face) {
  return PortPiece(net, channel, constriction, face, false);
}

// Coherent scattering of the integer channels: inputs are the pieces that contacts emit, outputs the
// pieces that contacts absorb, both over all integer channels (block diagonal by channel).
struct CoherentNetwork {
  const Design& d;
  const EdgeNetwork& net;
  std::vector<int> channels;  // integer channels
  std::vector<int> in_pieces, out_pieces, in_contact, out_contact;

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
  }

  // s[out][in] for the given phase of every piece.
  CMat Solve(const std::vector<double>& phase) const {
    const int n = static_cast<int>(net.pieces.size());
    CMat M = CMat::Zero(n, n);
    for (int p = 0; p < n; ++p) {
      const EdgePiece& e = net.pieces[static_cast<std::size_t>(p)];
      if (e.to.kind != EdgeEnd::Kind::kConstriction) continue;
      if (std::find(channels.begin(), channels.end(), e.channel) == channels.end()) continue;
      const double t =
          d.constrictions[static_cast<std::size_t>(e.to.index)].transmission[static_cast<std::size_t>(e.channel)];
      const cd carry = std::polar(1.0, phase[static_cast<std::size_t>(p)]);
      const int back = out_piece(net, e.channel, e.to.index, e.to.face);
      const int across = out_piece(net, e.channel, e.to.index, 1 - e.to.face);
      M(back, p) += std::sqrt(1.0 - t) * carry;
      M(across, p) += cd(0.0, std::sqrt(t)) * carry;
    }
    // Only pieces reachable from an input take part (closed loops that nothing feeds are left out).
    std::vector<char> reach(static_cast<std::size_t>(n), 0);
    std::vector<int> stack(in_pieces.begin(), in_pieces.end());
    while (!stack.empty()) {
      const int p = stack.back();
      stack.pop_back();
      if (reach[static_cast<std::size_t>(p)]) continue;
      reach[static_cast<std::size_t>(p)] = 1;
      for (int q = 0; q < n; ++q)
        if (M(q, p) != cd(0.0)) stack.push_back(q);
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

  // Büttiker's formula for contact voltages v (J per e: energies e V), temperature T.
  Mat Noise(const CMat& s, const std::vector<double>& v, double temperature_K) const {
    const int nc = static_cast<int>(d.contacts.size());
    const int nin = static_cast<int>(in_pieces.size());
    std::vector<CMat> B(static_cast<std::size_t>(nc), CMat::Zero(nin, nin));
    for (std::size_t o = 0; o < out_pieces.size(); ++o) {
      const auto row = s.row(static_cast<int>(o));
      B[static_cast<std::size_t>(out_contact[o])] += row.adjoint() * row;
    }
    Mat F(nc, nc);
    for (int a = 0; a < nc; ++a)
      for (int b = 0; b < nc; ++b)
        F(a, b) = ThermalShotFactor_J(
            kElementaryCharge_C * (v[static_cast<std::size_t>(a)] - v[static_cast<std::size_t>(b)]), temperature_K);
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
  const double kt = kBoltzmann_J_per_K * temperature_K;
  AmplifierNoise an;
  an.sample_resistance_Ohm = gs > 0.0 ? 1.0 / gs : HUGE_VAL;
  an.effective_resistance_Ohm = 1.0 / (std::max(gs, 0.0) + 1.0 / a.load_Ohm);
  const double re = an.effective_resistance_Ohm;
  an.excess_current_A2_per_Hz = excess_A2_per_Hz;
  an.signal_V2_per_Hz = re * re * excess_A2_per_Hz;
  an.floor_V2_per_Hz = a.voltage_noise_V_per_rtHz * a.voltage_noise_V_per_rtHz +
                       re * re * a.current_noise_A_per_rtHz * a.current_noise_A_per_rtHz + 4.0 * kt * re;
  an.floor_current_A2_per_Hz = an.floor_V2_per_Hz / (re * re);
  const double total = an.signal_V2_per_Hz + an.floor_V2_per_Hz;
  an.snr = std::abs(an.signal_V2_per_Hz) / total * std::sqrt(a.bandwidth_Hz * a.integration_s);
  if (std::abs(an.signal_V2_per_Hz) > 0.0) {
    const double ratio = target_sigmas * total / std::abs(an.signal_V2_per_Hz);
    an.time_for_target_s = ratio * ratio / a.bandwidth_Hz;
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

NoiseResult SolveNoise(const Design& d, const EdgeNetwork& net, const TransportResult& tr, const NoiseOptions& opt) {
  std::string why;
  if (!opt.IsValid(&why)) throw std::invalid_argument("NoiseOptions: " + why);
  NoiseResult r;
  r.field_T = net.field_T;
  const int nc = static_cast<int>(d.contacts.size());
  const double temperature = d.conditions.temperature_K;
  const double kt = kBoltzmann_J_per_K * temperature;
  auto add = [&](Severity s, std::string code, std::string msg, const SourceLocation& where) {
    r.findings.push_back({s, std::move(code), std::move(msg), where});
  };
  std::vector<double> v(static_cast<std::size_t>(nc), 0.0);
  for (int i = 0; i < nc; ++i) v[static_cast<std::size_t>(i)] = tr.voltage_V[static_cast<std::size_t>(i)].value_or(0.0);
  const Mat G = to_eigen(tr.conductance_S);

  // ---- Integer channels: coherent scattering ----
  const CoherentNetwork coherent(d, net);
  Mat s_bias = Mat::Zero(nc, nc), s_eq = Mat::Zero(nc, nc);
  if (!coherent.channels.empty() && !coherent.in_pieces.empty()) {
    const auto comps = FindEdgeLoops(d, net, coherent.channels);
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
      r.loops.push_back(loop);
    }
    const int samples = r.loops.empty() ? 1 : (opt.loop_phase_rad ? 1 : opt.phase_samples);
    r.phase_averaged = !r.loops.empty() && !opt.loop_phase_rad;
    r.phase_samples = samples;
    // Phase configurations: every piece gets phase 2 pi frac(k alpha_p), alpha_p = frac(p sqrt 2 +
    // (p + 1) sqrt 3) (a Weyl sequence, equidistributed); with a fixed loop phase, one piece of each
    // loop carries the phase and every other piece zero.
    for (int k = 0; k < samples; ++k) {
      std::vector<double> phase(net.pieces.size(), 0.0);
      if (opt.loop_phase_rad) {
        for (const CoherentLoop& loop : r.loops)
          phase[static_cast<std::size_t>(loop.pieces.front())] = *opt.loop_phase_rad;
      } else if (!r.loops.empty()) {
        for (std::size_t p = 0; p < phase.size(); ++p) {
          const double alpha = std::fmod(
              static_cast<double>(p) * std::numbers::sqrt2 + static_cast<double>(p + 1) * std::numbers::sqrt3, 1.0);
          phase[p] = 2.0 * std::numbers::pi * std::fmod(static_cast<double>(k) * alpha, 1.0);
        }
      }
      const CMat s = coherent.Solve(phase);
      if (s.rows() == s.cols())
        r.unitarity_error =
            std::max(r.unitarity_error, (s.adjoint() * s - CMat::Identity(s.rows(), s.cols())).cwiseAbs().maxCoeff());
      else
        r.unitarity_error = std::max(r.unitarity_error, 1.0);
      const Mat sb = coherent.Noise(s, v, temperature);
      const Mat se = coherent.Noise(s, std::vector<double>(static_cast<std::size_t>(nc), 0.0), temperature);
      s_bias += sb / samples;
      s_eq += se / samples;
      // The identity S_eq = 2 k_B T (G + G^T) holds for each phase configuration with that
      // configuration's own conductances G_ab = (e^2/h) (M_a d_ab - sum |s_ab|^2).
      Mat g_s = Mat::Zero(nc, nc);
      for (std::size_t j = 0; j < coherent.in_pieces.size(); ++j) {
        g_s(coherent.in_contact[j], coherent.in_contact[j]) += kConductanceQuantum_S;
        for (std::size_t o = 0; o < coherent.out_pieces.size(); ++o)
          g_s(coherent.out_contact[o], coherent.in_contact[j]) -=
              kConductanceQuantum_S * std::norm(s(static_cast<int>(o), static_cast<int>(j)));
      }
      const Mat eq_sample = 2.0 * kt * (g_s + g_s.transpose());
      const double scale = std::max(1e-300, eq_sample.cwiseAbs().maxCoeff());
      r.equilibrium_identity_error =
          std::max(r.equilibrium_identity_error, (se - eq_sample).cwiseAbs().maxCoeff() / scale);
    }
    if (r.unitarity_error > 1e-9)
      add(Severity::kError, "not-unitary",
          "the composed scattering matrix is not unitary (error " + std::to_string(r.unitarity_error) +
              "); the noise is not reliable",
          d.mesa.where);
    r.models.push_back(
        std::string(
            "integer channels: coherent scattering matrix with Büttiker's multi-terminal formula at finite temperature "
            "(Büttiker, Phys. Rev. B 46, 12485 (1992); physics.md 4.1); ") +
        (r.loops.empty()    ? "the network has no loop, so the phases drop out"
         : r.phase_averaged ? "averaged over " + std::to_string(samples) + " phase configurations of its loop(s)"
                            : "with the loop phase fixed at " + std::to_string(*opt.loop_phase_rad) + " rad"));
  }
  Mat excess = s_bias - s_eq;

  // ---- Fractional channels: independent partition noise at each constriction ----
  bool any_fractional = false;
  for (std::size_t k = 0; k < d.channels.size(); ++k) {
    if (is_integer_channel(d.channels[k])) continue;
    any_fractional = true;
    const double g = d.channels[k].conductance.value() * kConductanceQuantum_S;
    for (std::size_t q = 0; q < d.constrictions.size(); ++q) {
      const Constriction& c = d.constrictions[q];
      const double t = c.transmission[k];
      if (!(t > 0.0 && t < 1.0)) continue;
      const int i0 = in_piece(net, static_cast<int>(k), static_cast<int>(q), 0),
                i1 = in_piece(net, static_cast<int>(k), static_cast<int>(q), 1);
      const int o0 = out_piece(net, static_cast<int>(k), static_cast<int>(q), 0),
                o1 = out_piece(net, static_cast<int>(k), static_cast<int>(q), 1);
      if (i0 < 0 || i1 < 0 || o0 < 0 || o1 < 0) continue;
      const double vq = std::abs(tr.piece_potential_V[static_cast<std::size_t>(i0)] -
                                 tr.piece_potential_V[static_cast<std::size_t>(i1)]);
      const Regime regime = c.regime.value_or(t >= 0.5 ? Regime::kWeak : Regime::kStrong);
      const double charge = (regime == Regime::kWeak ? d.channels[k].charge_e : 1.0) * kElementaryCharge_C;
      const double sq = FractionalPartitionNoise_A2_per_Hz(charge, vq, g, t, temperature);
      Eigen::VectorXd w(nc);
      for (int a = 0; a < nc; ++a)
        w(a) = tr.piece_absorption[static_cast<std::size_t>(o1)][static_cast<std::size_t>(a)] -
               tr.piece_absorption[static_cast<std::size_t>(o0)][static_cast<std::size_t>(a)];
      excess += sq * w * w.transpose();
    }
  }
  if (any_fractional)
    r.models.push_back(
        "fractional channels: independent partition noise at each constriction, 2 e* V g t(1-t)[coth(e*V/2kT) - "
        "2kT/e*V], with "
        "e* of its regime (Kane & Fisher, Phys. Rev. Lett. 72, 724 (1994); physics.md 5), carried to the contacts by "
        "the "
        "incoherent network; correlations between constrictions and anyonic braiding are not included here (see "
        "colliders)");
  const Mat equilibrium = 2.0 * kt * (G + G.transpose());

  // ---- Floating contacts and current sources: dI = 0 ----
  std::vector<int> held, fixed;
  for (int i = 0; i < nc; ++i) {
    const Wiring& w = d.wiring[static_cast<std::size_t>(i)];
    const bool floating = w.role == Role::kFloat || (w.role == Role::kSource && w.bias_is_current);
    (floating && tr.voltage_V[static_cast<std::size_t>(i)] ? held : fixed).push_back(i);
  }
  Mat L = Mat::Identity(nc, nc);
  if (!held.empty()) {
    Mat gff(static_cast<int>(held.size()), static_cast<int>(held.size()));
    for (std::size_t a = 0; a < held.size(); ++a)
      for (std::size_t b = 0; b < held.size(); ++b) gff(static_cast<int>(a), static_cast<int>(b)) = G(held[a], held[b]);
    const Mat inv = gff.fullPivLu().inverse();
    L = Mat::Zero(nc, nc);
    for (int a : fixed) {
      L(a, a) = 1.0;
      for (std::size_t f = 0; f < held.size(); ++f) {
        double x = 0.0;
        for (std::size_t h = 0; h < held.size(); ++h)
          x += G(a, held[h]) * inv(static_cast<int>(h), static_cast<int>(f));
        L(a, held[f]) = -x;
      }
    }
    r.models.push_back(
        "floating contacts and current sources conserve current at low frequency (physics.md 4.4); their heating "
        "by the bias is not included");
  }
  const Mat excess_p = L * excess * L.transpose();
  const Mat eq_p = L * equilibrium * L.transpose();
  r.excess_A2_per_Hz = from_eigen(excess_p);
  r.equilibrium_A2_per_Hz = from_eigen(eq_p);
  r.total_A2_per_Hz = from_eigen(excess_p + eq_p);

  // ---- Amplifiers ----
  // The sample seen from an amplifier contact: the other fixed-voltage contacts held at AC ground,
  // floating ones eliminated: G' = G_AA - G_AF G_FF^-1 G_FA (the Schur complement).
  const Mat Gp = L * G * L.transpose();
  std::vector<int> amps;
  for (int i = 0; i < nc; ++i)
    if (d.wiring[static_cast<std::size_t>(i)].role == Role::kAmplifier) amps.push_back(i);
  for (int i : amps) {
    AmplifierNoise an = AmplifierChain(Gp(i, i), *d.wiring[static_cast<std::size_t>(i)].amplifier, temperature,
                                       excess_p(i, i), opt.target_sigmas);
    an.contact = i;
    r.amplifiers.push_back(an);
  }
  auto amp_of = [&](int contact) -> const AmplifierNoise* {
    for (const auto& a : r.amplifiers)
      if (a.contact == contact) return &a;
    return nullptr;
  };
  // Cross-spectrum error: sqrt((S_xx S_yy + S_xy^2) / (2 df t)) (physics.md 8).
  auto cross_of = [&](int x, int y, double s_xy_current, double* snr, std::optional<double>* time,
                      double target_signal_V2) {
    const AmplifierNoise* ax = amp_of(x);
    const AmplifierNoise* ay = amp_of(y);
    const Amplifier& a = *d.wiring[static_cast<std::size_t>(x)].amplifier;
    const Amplifier& b = *d.wiring[static_cast<std::size_t>(y)].amplifier;
    const double df = std::min(a.bandwidth_Hz, b.bandwidth_Hz), t = std::min(a.integration_s, b.integration_s);
    const double rr = ax->effective_resistance_Ohm * ay->effective_resistance_Ohm;
    const double sxx = ax->signal_V2_per_Hz + ax->floor_V2_per_Hz, syy = ay->signal_V2_per_Hz + ay->floor_V2_per_Hz;
    const double sxy = rr * (s_xy_current + eq_p(x, y));
    const double var = sxx * syy + sxy * sxy;
    const double signal = rr * s_xy_current;
    *snr = std::abs(signal) / std::sqrt(var / (2.0 * df * t));
    if (std::abs(target_signal_V2) > 0.0) *time = var / (2.0 * df * target_signal_V2 * target_signal_V2);
    return signal;
  };
  for (std::size_t a = 0; a < amps.size(); ++a)
    for (std::size_t b = a + 1; b < amps.size(); ++b) {
      CrossNoise cn;
      cn.first = amps[a];
      cn.second = amps[b];
      cn.excess_current_A2_per_Hz = excess_p(amps[a], amps[b]);
      const double rr = amp_of(amps[a])->effective_resistance_Ohm * amp_of(amps[b])->effective_resistance_Ohm;
      cn.signal_V2_per_Hz = cross_of(amps[a], amps[b], cn.excess_current_A2_per_Hz, &cn.snr, &cn.time_for_target_s,
                                     rr * cn.excess_current_A2_per_Hz / opt.target_sigmas);
      r.cross.push_back(cn);
    }
  if (!amps.empty())
    r.models.push_back(
        "amplifier chain: sample in parallel with the load, S_V = R^2 S_I + e_n^2 + R^2 i_n^2 + 4kTR; averaging "
        "error S/sqrt(df t) for autocorrelations and sqrt((SxxSyy + Sxy^2)/(2 df t)) for cross-correlations "
        "(Dicke radiometer formula; physics.md 8)");

  // ---- Colliders ----
  for (std::size_t k = 0; k < d.channels.size(); ++k) {
    const Channel& ch = d.channels[k];
    if (is_integer_channel(ch) || !ch.exchange_pi || !ch.scaling) continue;
    for (std::size_t q = 0; q < d.constrictions.size(); ++q) {
      const Constriction& c = d.constrictions[q];
      const int in0 = in_piece(net, static_cast<int>(k), static_cast<int>(q), 0),
                in1 = in_piece(net, static_cast<int>(k), static_cast<int>(q), 1);
      if (in0 < 0 || in1 < 0) continue;
      const EdgePiece& p0 = net.pieces[static_cast<std::size_t>(in0)];
      const EdgePiece& p1 = net.pieces[static_cast<std::size_t>(in1)];
      if (p0.from.kind != EdgeEnd::Kind::kConstriction || p1.from.kind != EdgeEnd::Kind::kConstriction) continue;
      if (p0.from.index == static_cast<int>(q) || p1.from.index == static_cast<int>(q)) continue;
      // A source constriction in weak backscattering sends its reflected quasiparticles along the
      // output on the face where its hot input arrived; the stream is that output's potential
      // above the other (transmitted, noiseless) input.
      auto stream = [&](const EdgePiece& p, double* tunnelling) -> std::optional<double> {
        const Constriction& src = d.constrictions[static_cast<std::size_t>(p.from.index)];
        const double ts = src.transmission[k];
        const Regime reg = src.regime.value_or(ts >= 0.5 ? Regime::kWeak : Regime::kStrong);
        if (reg != Regime::kWeak || !(ts < 1.0)) return std::nullopt;
        *tunnelling = 1.0 - ts;
        const int other = in_piece(net, static_cast<int>(k), p.from.index, 1 - p.from.face);
        const int self = out_piece(net, static_cast<int>(k), p.from.index, p.from.face);
        if (other < 0 || self < 0) return std::nullopt;
        return ch.conductance.value() * kConductanceQuantum_S *
               std::abs(tr.piece_potential_V[static_cast<std::size_t>(self)] -
                        tr.piece_potential_V[static_cast<std::size_t>(other)]);
      };
      double ta = 0.0, tb = 0.0;
      const auto ia = stream(p0, &ta), ib = stream(p1, &tb);
      if (!ia || !ib) continue;
      ColliderPrediction cp;
      cp.constriction = static_cast<int>(q);
      cp.channel = static_cast<int>(k);
      cp.source_first = p0.from.index;
      cp.source_second = p1.from.index;
      cp.stream_first_A = *ia;
      cp.stream_second_A = *ib;
      cp.i_plus_A = *ia + *ib;
      cp.i_minus_A = *ia - *ib;
      const Regime reg = c.regime.value_or(c.transmission[k] >= 0.5 ? Regime::kWeak : Regime::kStrong);
      cp.tunnelling = reg == Regime::kWeak ? 1.0 - c.transmission[k] : c.transmission[k];
      cp.charge_e = ch.charge_e;
      cp.exchange_pi = *ch.exchange_pi;
      cp.scaling = *ch.scaling;
      cp.dilute = ta <= opt.dilution_limit && tb <= opt.dilution_limit;
      cp.weak_tunnelling = reg == Regime::kWeak && cp.tunnelling <= opt.weak_tunnelling_limit;
      cp.exchange_below_half_pi = cp.exchange_pi <= 0.5;
      const double theta = cp.exchange_pi * std::numbers::pi;
      const double charge = cp.charge_e * kElementaryCharge_C;
      cp.rate_over_temperature = ColliderRateOverTemperature(theta, cp.i_plus_A, charge, temperature);
      for (int f = 0; f < 2; ++f) {
        const int o = out_piece(net, static_cast<int>(k), static_cast<int>(q), f);
        int best = -1;
        double most = 0.0;
        for (int a = 0; o >= 0 && a < nc; ++a)
          if (tr.piece_absorption[static_cast<std::size_t>(o)][static_cast<std::size_t>(a)] > most) {
            most = tr.piece_absorption[static_cast<std::size_t>(o)][static_cast<std::size_t>(a)];
            best = a;
          }
        (f == 0 ? cp.output_first : cp.output_second) = best;
      }
      if (!ch.note.empty()) cp.caveats.push_back(ch.note);
      if (!cp.dilute)
        cp.caveats.push_back("a source constriction is not dilute (tunnelling probability above the dilution limit)");
      if (!cp.weak_tunnelling) cp.caveats.push_back("the collider is not in weak tunnelling");
      if (!cp.exchange_below_half_pi)
        cp.caveats.push_back("exchange phase above pi/2: the formula does not apply (finite anyon width)");
      if (cp.rate_over_temperature < 1.0)
        cp.caveats.push_back(
            "injection rate below the temperature (zeta < 1): the T = 0 form is not reliable; thermal effects are not "
            "included");
      const double x = cp.i_plus_A > 0.0 ? cp.i_minus_A / cp.i_plus_A : 1.0;
      if (cp.exchange_below_half_pi && cp.exchange_pi > 0.0 && cp.scaling > 0.0 && cp.scaling < 0.5 &&
          cp.i_plus_A > 0.0 && std::abs(x) < 1.0 && cp.exchange_pi < 0.5) {
        cp.fano = ColliderFano(x, theta, cp.scaling);
        cp.s34_A2_per_Hz = 2.0 * *cp.fano * charge * cp.i_plus_A * cp.tunnelling * (1.0 - cp.tunnelling);
        if (cp.output_first >= 0 && cp.output_second >= 0 && amp_of(cp.output_first) && amp_of(cp.output_second) &&
            cp.output_first != cp.output_second) {
          const double rr =
              amp_of(cp.output_first)->effective_resistance_Ohm * amp_of(cp.output_second)->effective_resistance_Ohm;
          double snr = 0.0;
          cross_of(cp.output_first, cp.output_second, *cp.s34_A2_per_Hz, &snr, &cp.time_for_fano_s,
                   rr * opt.collider_fano_uncertainty * *cp.s34_A2_per_Hz / *cp.fano);
        }
      } else if (std::abs(x) >= 1.0) {
        cp.caveats.push_back("only one input carries a stream (|I-/I+| = 1): P is not defined");
      }
      r.colliders.push_back(cp);
    }
  }
  if (!r.colliders.empty())
    r.models.push_back(
        "colliders: generalized Fano factor P of Rosenow, Levkivskyi & Halperin, Phys. Rev. Lett. 116, 156802 (2016), "
        "T = 0, lowest order in the collider tunnelling (physics.md 6); S_34 = 2 P e* I+ T(1 - T) (physics.md A)");
  return r;
}

}  // namespace hallway
