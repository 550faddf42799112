// The exact reference for the coverage count (issue 16, acceptance 2; docs/fit.md,
// "Validation"): the same noisy points fitted by the model linearised at the truth, with the
// Student t interval of a linear least-squares estimate. For a linear model with normal
// errors that interval covers the truth with probability exactly 95 % (the classical
// result, e.g. G. A. F. Seber and A. J. Lee, "Linear Regression Analysis", 2nd ed., Wiley
// 2003, chapter 5 — recalled from memory), so its verdict on each seed says what an exact
// interval does with that seed's noise. The linearisation is built here from the test's own
// law (fit_points.h, the contract's equations), not from knee's derivatives.
#pragma once

#include <Eigen/Dense>
#include <boost/math/distributions/students_t.hpp>
#include <cmath>
#include <vector>

#include "finite_difference.h"
#include "fit_points.h"
#include "knee/fit.h"

namespace knee::testing {

// The truth's value of a key.
inline double TruthOf(const Truth& t, FitKey key) {
  switch (key) {
    case FitKey::kSatCurrent:
      return t.is;
    case FitKey::kIdeality:
      return t.n;
    case FitKey::kSeriesRes:
      return t.rs;
    case FitKey::kBreakdownV:
      return t.bv;
    case FitKey::kBreakdownI:
      return t.ibr;
    case FitKey::kBreakdownIdeality:
      return t.nbr;
    case FitKey::kBreakdownTc:
      return t.tc;
    case FitKey::kBandgap:
      return t.eg;
    case FitKey::kSatTempExp:
      return t.temp_exp;
  }
  return 0;
}

// The key in the coordinate the fit moves (sat_current and breakdown_i as logarithms).
inline double Coordinate(const Truth& t, FitKey key) {
  const bool logarithmic = key == FitKey::kSatCurrent || key == FitKey::kBreakdownI;
  return logarithmic ? std::log(TruthOf(t, key)) : TruthOf(t, key);
}

inline Truth WithCoordinate(Truth t, FitKey key, double x) {
  switch (key) {
    case FitKey::kSatCurrent:
      t.is = std::exp(x);
      break;
    case FitKey::kIdeality:
      t.n = x;
      break;
    case FitKey::kSeriesRes:
      t.rs = x;
      break;
    case FitKey::kBreakdownV:
      t.bv = x;
      break;
    case FitKey::kBreakdownI:
      t.ibr = std::exp(x);
      break;
    case FitKey::kBreakdownIdeality:
      t.nbr = x;
      break;
    case FitKey::kBreakdownTc:
      t.tc = x;
      break;
    case FitKey::kBandgap:
      t.eg = x;
      break;
    case FitKey::kSatTempExp:
      t.temp_exp = x;
      break;
  }
  return t;
}

class LinearReference {
 public:
  // `clean`: the noise-free points of `truth` (MakeData); `keys`: the fitted keys.
  LinearReference(const Truth& truth, const FitData& clean, std::vector<FitKey> keys)
      : clean_(clean), keys_(std::move(keys)) {
    const auto n = static_cast<Eigen::Index>(clean.points.size());
    const auto p = static_cast<Eigen::Index>(keys_.size());
    j_.resize(n, p);
    for (Eigen::Index row = 0; row < n; ++row) {
      const FitPoint& pt = clean.points[static_cast<size_t>(row)];
      const double sign = pt.i > 0 ? 1 : -1;
      // d ln|I| / d x at fixed V = -(dV/dx) / (dV/d ln|I|) (implicit function theorem on the
      // law written as V(I), explicit in fit_points.h).
      const double dv_dlni =
          RiddersDerivative([&](double u) { return VoltageAt(truth, sign * std::exp(u), pt.temp); },
                            std::log(std::fabs(pt.i)), 1e-2)
              .derivative;
      for (Eigen::Index c = 0; c < p; ++c) {
        const FitKey key = keys_[static_cast<size_t>(c)];
        const double x = Coordinate(truth, key);
        const double dv_dx =
            RiddersDerivative(
                [&](double y) { return VoltageAt(WithCoordinate(truth, key, y), pt.i, pt.temp); },
                x, 1e-3 * std::max(std::fabs(x), 1e-2))
                .derivative;
        j_(row, c) = -dv_dx / dv_dlni;
      }
    }
    inverse_normal_ = (j_.transpose() * j_).inverse();
    qr_.compute(j_);
    t_ = boost::math::quantile(
        boost::math::complement(boost::math::students_t(static_cast<double>(n - p)), 0.025));
  }

  // For each key (in the order given): whether the linear fit of `noisy` (the clean points
  // with noise on the currents) has a 95 % interval that covers the truth.
  std::vector<bool> Covers(const FitData& noisy) const {
    const auto n = static_cast<Eigen::Index>(clean_.points.size());
    Eigen::VectorXd r(n);  // ln(I_model / I) at the truth: the clean current against the noisy
    for (Eigen::Index k = 0; k < n; ++k) {
      const auto i = static_cast<size_t>(k);
      r(k) = std::log(std::fabs(clean_.points[i].i)) - std::log(std::fabs(noisy.points[i].i));
    }
    const Eigen::VectorXd delta = qr_.solve(-r);  // minimises |r + J delta|
    const double s2 = (r + j_ * delta).squaredNorm() / static_cast<double>(n - j_.cols());
    std::vector<bool> covers;
    for (Eigen::Index c = 0; c < j_.cols(); ++c) {
      covers.push_back(std::fabs(delta(c)) <= t_ * std::sqrt(s2 * inverse_normal_(c, c)));
    }
    return covers;
  }

 private:
  FitData clean_;
  std::vector<FitKey> keys_;
  Eigen::MatrixXd j_, inverse_normal_;
  Eigen::ColPivHouseholderQR<Eigen::MatrixXd> qr_;
  double t_ = 0;
};

}  // namespace knee::testing
