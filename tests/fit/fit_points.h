// Points generated from known parameters by the law of netlist-format.md ("Diode
// parameters", the contract's equations written out here, not knee's code): the terminal
// voltage at a given current, explicit in the current.
#pragma once

#include <cmath>
#include <random>
#include <vector>

#include "knee/fit.h"

namespace knee::testing {

struct Truth {
  double is = 2e-9, n = 1.8, rs = 0.05;
  bool breakdown = false;
  double bv = 100, ibr = 1e-3, nbr = 1.5, tc = 8e-4;
  double eg = 1.12, temp_exp = 3, t0 = 25;
};

// CODATA 2018 exact constants (SI 2019).
inline double Vt(double celsius) { return 1.380649e-23 * (celsius + 273.15) / 1.602176634e-19; }

inline double IsAt(const Truth& t, double celsius) {
  const double tk = celsius + 273.15, t0k = t.t0 + 273.15;
  return t.is * std::pow(tk / t0k, t.temp_exp / t.n) *
         std::exp(t.eg / (t.n * Vt(t.t0)) * (1 - t0k / tk));
}

// v at current i: the junction voltage solves i = Is(T)(exp(vj/nVt) - 1) - Ibr exp(-(vj +
// Vbr)/(nbr Vt)); each branch is explicit when the other is written as the small term it is
// on that side, and three fixed-point passes settle the small term to double precision.
inline double VoltageAt(const Truth& t, double i, double celsius) {
  const double is = IsAt(t, celsius), vt = Vt(celsius);
  const double vbr = t.bv * (1 + t.tc * (celsius - t.t0));
  double vj = 0;
  for (int pass = 0; pass < 3; ++pass) {
    const double rev = t.breakdown ? t.ibr * std::exp(-(vj + vbr) / (t.nbr * vt)) : 0;
    const double fwd = is * std::expm1(vj / (t.n * vt));
    if (i > 0) {
      vj = t.n * vt * std::log1p((i + rev) / is);
    } else {
      vj = -vbr - t.nbr * vt * std::log((fwd - i) / t.ibr);
    }
  }
  return vj + i * t.rs;
}

struct Spec {
  std::vector<double> temps = {25};
  double i_lo = 1e-6, i_hi = 3;
  int forward_per_temp = 25;
  std::vector<double> breakdown_currents;  // magnitudes, A
};

inline FitData MakeData(const Truth& truth, const Spec& spec) {
  FitData data;
  data.header_where.line = 1;
  data.header_where.column = 1;
  data.has_temp_column = spec.temps.size() > 1;
  int line = 2;
  auto add = [&](double v, double i, double temp) {
    FitPoint p;
    p.v = v, p.i = i, p.temp = temp;
    p.v_where.line = p.i_where.line = p.temp_where.line = p.weight_where.line = line++;
    p.v_where.column = 1;
    p.i_where.column = 10;
    data.points.push_back(p);
  };
  for (double temp : spec.temps) {
    for (int k = 0; k < spec.forward_per_temp; ++k) {
      const double i = spec.i_lo * std::pow(spec.i_hi / spec.i_lo,
                                            static_cast<double>(k) / (spec.forward_per_temp - 1));
      add(VoltageAt(truth, i, temp), i, temp);
    }
    for (double ib : spec.breakdown_currents) add(VoltageAt(truth, -ib, temp), -ib, temp);
  }
  return data;
}

// 1 % multiplicative noise on each current: i * (1 + 0.01 z), z standard normal.
inline FitData WithNoise(FitData data, unsigned seed, double relative = 0.01) {
  std::mt19937_64 rng(seed);
  std::normal_distribution<double> z(0, 1);
  for (FitPoint& p : data.points) p.i *= 1 + relative * z(rng);
  return data;
}

}  // namespace knee::testing
