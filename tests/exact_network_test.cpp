// The floating-point edge-network solution against the same network solved in exact rational
// arithmetic (CGAL's Gmpq, backed by GMP): absorbing chain, conductance matrix and the wiring plan
// with floating contacts.
#include <CGAL/Gmpq.h>
#include <gtest/gtest.h>

#include <cmath>
#include <fstream>
#include <sstream>

#include "hallway/constants.hpp"
#include "hallway/design_loader.hpp"
#include "hallway/network.hpp"
#include "hallway/transport.hpp"
#include "test_support.hpp"

namespace hallway {
namespace {

using Q = CGAL::Gmpq;
using QMatrix = std::vector<std::vector<Q>>;

// Decimal values of a design file are exact rationals with at most 12 decimals here.
Q rational(double x) {
  return Q(static_cast<long>(std::llround(x * 1e12)), 1000000000000L);
}

// Solves A X = B by Gauss-Jordan elimination with exact pivots (A square, invertible).
QMatrix solve(QMatrix a, QMatrix b) {
  const std::size_t n = a.size();
  for (std::size_t c = 0; c < n; ++c) {
    std::size_t p = c;
    while (p < n && a[p][c] == 0) ++p;
    if (p == n) throw std::runtime_error("singular");
    std::swap(a[p], a[c]);
    std::swap(b[p], b[c]);
    const Q inv = Q(1) / a[c][c];
    for (auto& x : a[c]) x *= inv;
    for (auto& x : b[c]) x *= inv;
    for (std::size_t r = 0; r < n; ++r) {
      if (r == c || a[r][c] == 0) continue;
      const Q f = a[r][c];
      for (std::size_t k = 0; k < n; ++k) a[r][k] -= f * a[c][k];
      for (std::size_t k = 0; k < b[r].size(); ++k) b[r][k] -= f * b[c][k];
    }
  }
  return b;
}

struct ExactResult {
  QMatrix g;             // in e^2/h
  std::vector<Q> volts;  // wiring plan
};

ExactResult exact(const Design& d, const EdgeNetwork& net) {
  const std::size_t nc = d.contacts.size();
  ExactResult out{QMatrix(nc, std::vector<Q>(nc, Q(0))), {}};
  for (std::size_t k = 0; k < d.channels.size(); ++k) {
    std::vector<std::size_t> states;
    for (std::size_t p = 0; p < net.pieces.size(); ++p)
      if (net.pieces[p].channel == static_cast<int>(k)) states.push_back(p);
    const std::size_t n = states.size();
    auto state_from = [&](const EdgeEnd& e) {
      for (std::size_t s = 0; s < n; ++s)
        if (net.pieces[states[s]].from == e) return s;
      throw std::runtime_error("missing port");
    };
    QMatrix a(n, std::vector<Q>(n, Q(0))), r(n, std::vector<Q>(nc, Q(0)));
    for (std::size_t s = 0; s < n; ++s) {
      a[s][s] = 1;
      const EdgePiece& p = net.pieces[states[s]];
      if (p.to.kind == EdgeEnd::Kind::kContact) {
        r[s][static_cast<std::size_t>(p.to.index)] = 1;
        continue;
      }
      const Q t = rational(d.constrictions[static_cast<std::size_t>(p.to.index)].transmission[k]);
      a[s][state_from({EdgeEnd::Kind::kConstriction, p.to.index, p.to.face})] -= Q(1) - t;
      a[s][state_from({EdgeEnd::Kind::kConstriction, p.to.index, 1 - p.to.face})] -= t;
    }
    const QMatrix absorb = solve(a, r);
    const Q gk(d.channels[k].conductance.num, d.channels[k].conductance.den);
    for (std::size_t s = 0; s < n; ++s) {
      const EdgePiece& p = net.pieces[states[s]];
      if (p.from.kind != EdgeEnd::Kind::kContact) continue;
      const auto j = static_cast<std::size_t>(p.from.index);
      out.g[j][j] += gk;  // one emitted edge: M_jk += 1
      for (std::size_t i = 0; i < nc; ++i) out.g[i][j] -= gk * absorb[s][i];
    }
  }
  // Wiring: floats and current sources unknown; here only voltage sources, grounds, amplifiers, floats.
  std::vector<Q> v(nc, Q(0));
  std::vector<std::size_t> unknown;
  for (std::size_t i = 0; i < nc; ++i) {
    const Wiring& w = d.wiring[i];
    if (w.role == Role::kSource) v[i] = rational(w.bias_V);
    if (w.role == Role::kFloat) unknown.push_back(i);
  }
  QMatrix a(unknown.size(), std::vector<Q>(unknown.size(), Q(0))), b(unknown.size(), std::vector<Q>(1, Q(0)));
  for (std::size_t x = 0; x < unknown.size(); ++x) {
    for (std::size_t j = 0; j < nc; ++j)
      if (d.wiring[j].role != Role::kFloat) b[x][0] -= out.g[unknown[x]][j] * v[j];
    for (std::size_t y = 0; y < unknown.size(); ++y) a[x][y] = out.g[unknown[x]][unknown[y]];
  }
  if (!unknown.empty()) {
    const QMatrix sol = solve(a, b);
    for (std::size_t x = 0; x < unknown.size(); ++x) v[unknown[x]] = sol[x][0];
  }
  out.volts = v;
  return out;
}

std::string read(const std::string& rel) {
  std::ifstream in(test::SourcePath(rel));
  std::stringstream ss;
  ss << in.rdbuf();
  return ss.str();
}

void compare(const std::string& text, const std::string& name) {
  const Design d = LoadDesignFromString(text, name);
  const ChannelGeometry g = BuildChannelGeometry(d);
  for (double sign : {1.0, -1.0}) {
    const EdgeNetwork net = TraceEdges(d, g, sign * std::abs(d.conditions.field_T));
    const TransportResult t = SolveTransport(d, net);
    const ExactResult x = exact(d, net);
    int floats = 0;
    for (std::size_t i = 0; i < d.contacts.size(); ++i) {
      for (std::size_t j = 0; j < d.contacts.size(); ++j)
        EXPECT_NEAR(t.conductance_S[i][j] / constants::kConductanceQuantum_S, CGAL::to_double(x.g[i][j]), 1e-12)
            << name << " G[" << i << "][" << j << "]";
      ASSERT_TRUE(t.voltage_V[i].has_value());
      EXPECT_NEAR(*t.voltage_V[i], CGAL::to_double(x.volts[i]), 1e-12 * 1e-4) << name << " V of " << d.contacts[i].name;
      floats += d.wiring[i].role == Role::kFloat;
    }
    EXPECT_GT(floats, 0);
  }
}

TEST(ExactArithmetic, FabryPerotWithFloatingContactsMatchesRationalSolution) {
  std::string text = read("designs/03_fabry_perot.yaml");
  text = test::replace(text, "transmission: 0.5}", "transmission: 0.3}");
  text = test::replace(text, "transmission: 0.5}", "transmission: 0.65}");
  compare(text, "fp.yaml");
}

TEST(ExactArithmetic, ThreeConstrictionColliderWithFloatingContactsMatchesRationalSolution) {
  std::string text = read("designs/02_two_source_collider.yaml");
  text = test::replace(text, "GA: ground", "GA: float");
  text = test::replace(text, "SB: source 30 uV", "SB: source 17 uV");
  compare(text, "collider.yaml");
}

}  // namespace
}  // namespace hallway
