// The fit (docs/fit.md): key selection, the Levenberg-Marquardt solve with Ceres, the
// covariance, and the account of keys the points cannot determine.
#include "knee/fit.h"

#include <ceres/ceres.h>
#include <fmt/format.h>

#include <Eigen/Dense>
#include <algorithm>
#include <boost/math/distributions/normal.hpp>
#include <boost/math/distributions/students_t.hpp>
#include <cmath>
#include <cstdlib>
#include <map>
#include <set>

#include "fit_checks.h"
#include "fit_law.h"
#include "fit_start.h"
#include "knee/diode_law.h"

namespace knee {
namespace {

using fit_internal::DataError;
using fit_internal::Index;
using fit_internal::Params;

// The order in which keys are held when the points cannot determine them all: the
// refinements before the keys that every diode needs.
constexpr FitKey kHoldOrder[] = {
    FitKey::kSatTempExp, FitKey::kBreakdownTc, FitKey::kBreakdownIdeality,
    FitKey::kBandgap,    FitKey::kSeriesRes,   FitKey::kBreakdownI,
    FitKey::kBreakdownV, FitKey::kIdeality,    FitKey::kSatCurrent,
};
// Singular values of the column-scaled Jacobian below this share of the largest mean a
// direction of the keys that moves no point: those keys are not determined separately.
constexpr double kRankTolerance = 1e-9;
constexpr double kLooseRankTolerance = 1e-6;
// A log-space key whose 95 % interval spans more than this factor either way is not
// determined by the points.
constexpr double kLogSpanLimit = 10.0;
constexpr double kConfidence = 0.95;

bool IsLogKey(FitKey key) { return key == FitKey::kSatCurrent || key == FitKey::kBreakdownI; }

// Ceres moves u = x / scale: each free key is scaled by its Jacobian column's norm at the
// start, so that the columns Ceres (and its covariance) sees are of one size and the
// condition number reflects only how the keys correlate.
using Scales = std::array<double, kFitKeyCount>;

class PointCost final : public ceres::CostFunction {
 public:
  PointCost(const FitPoint& point, bool breakdown, double ref_temp, const Scales& scale)
      : point_(point), breakdown_(breakdown), ref_temp_(ref_temp), scale_(scale) {
    set_num_residuals(1);
    for (int k = 0; k < kFitKeyCount; ++k) mutable_parameter_block_sizes()->push_back(1);
  }
  bool Evaluate(double const* const* parameters, double* residuals,
                double** jacobians) const override {
    Params x;
    for (int k = 0; k < kFitKeyCount; ++k) x[k] = parameters[k][0] * scale_[k];
    std::array<double, kFitKeyCount> g{};
    if (!fit_internal::PointResidual(x, breakdown_, ref_temp_, point_, residuals,
                                     jacobians != nullptr ? &g : nullptr)) {
      return false;
    }
    if (jacobians != nullptr) {
      for (int k = 0; k < kFitKeyCount; ++k) {
        if (jacobians[k] != nullptr) jacobians[k][0] = g[k] * scale_[k];
      }
    }
    return true;
  }

 private:
  FitPoint point_;
  bool breakdown_;
  double ref_temp_;
  Scales scale_;
};

struct Setup {
  const FitData* data = nullptr;
  DiodeModel model;
  std::array<bool, kFitKeyCount> free{};
  bool breakdown = false;
  bool explicit_keys = false;
};

std::vector<FitKey> FreeKeys(const Setup& s) {
  std::vector<FitKey> keys;
  for (int k = 0; k < kFitKeyCount; ++k) {
    if (s.free[k]) keys.push_back(static_cast<FitKey>(k));
  }
  return keys;
}

std::string KeyList(const std::vector<FitKey>& keys) {
  std::string text;
  for (size_t k = 0; k < keys.size(); ++k) {
    text += (k == 0 ? "" : k + 1 == keys.size() ? " and " : ", ");
    text += FitKeyName(keys[k]);
  }
  return text;
}

// The Jacobian of the residuals with respect to the free keys (rows: points).
bool Jacobian(const Setup& s, const Params& x, Eigen::MatrixXd* j) {
  const std::vector<FitKey> keys = FreeKeys(s);
  j->resize(static_cast<Eigen::Index>(s.data->points.size()),
            static_cast<Eigen::Index>(keys.size()));
  Eigen::Index row = 0;
  for (const FitPoint& p : s.data->points) {
    double r = 0;
    std::array<double, kFitKeyCount> g{};
    if (!fit_internal::PointResidual(x, s.breakdown, s.model.ref_temp, p, &r, &g)) return false;
    for (size_t c = 0; c < keys.size(); ++c) {
      (*j)(row, static_cast<Eigen::Index>(c)) = g[Index(keys[c])];
    }
    ++row;
  }
  return true;
}

// A free key that moves no point independently of the others, or nullopt. `why` says how.
std::optional<FitKey> DependentKey(const Setup& s, const Params& x, std::string* why,
                                   double tolerance = kRankTolerance) {
  const std::vector<FitKey> keys = FreeKeys(s);
  if (keys.empty()) return std::nullopt;
  Eigen::MatrixXd j;
  if (!Jacobian(s, x, &j)) return std::nullopt;
  for (Eigen::Index c = 0; c < j.cols(); ++c) {
    const double norm = j.col(c).norm();
    if (!(norm > 0)) {
      *why = "it moves none of the points";
      return keys[static_cast<size_t>(c)];
    }
    j.col(c) /= norm;
  }
  Eigen::JacobiSVD<Eigen::MatrixXd> svd(j, Eigen::ComputeFullV);
  const Eigen::VectorXd sv = svd.singularValues();
  const Eigen::Index last = static_cast<Eigen::Index>(keys.size()) - 1;
  const bool short_rows = j.rows() < j.cols();
  if (!short_rows && sv(last) > tolerance * sv(0)) return std::nullopt;
  const Eigen::VectorXd null = svd.matrixV().col(last);
  const double biggest = null.cwiseAbs().maxCoeff();
  std::vector<FitKey> involved;
  for (size_t c = 0; c < keys.size(); ++c) {
    if (std::fabs(null(static_cast<Eigen::Index>(c))) > 0.05 * biggest) involved.push_back(keys[c]);
  }
  for (FitKey key : kHoldOrder) {
    if (std::find(involved.begin(), involved.end(), key) == involved.end()) continue;
    *why = involved.size() > 1 ? fmt::format("the points fix {} only together", KeyList(involved))
                               : "it moves none of the points";
    return key;
  }
  return std::nullopt;
}

struct Solved {
  Params x{};
  bool converged = false;
  int iterations = 0;
  std::string termination;
  double ssr = 0;
  Eigen::MatrixXd covariance;  // of the free keys, unscaled (J'J)^-1
  bool covariance_ok = false;
};

Scales ColumnScales(const Setup& s, const Params& start) {
  Scales scale;
  scale.fill(1.0);
  const std::vector<FitKey> keys = FreeKeys(s);
  Eigen::MatrixXd j;
  if (!Jacobian(s, start, &j)) return scale;
  for (size_t c = 0; c < keys.size(); ++c) {
    const double norm = j.col(static_cast<Eigen::Index>(c)).norm();
    if (norm > 0 && std::isfinite(norm)) scale[Index(keys[c])] = 1 / norm;
  }
  return scale;
}

Solved Solve(const Setup& s, const Params& start, const FitOptions& options) {
  Solved out;
  const Scales scale = ColumnScales(s, start);
  Params u;
  for (int k = 0; k < kFitKeyCount; ++k) u[k] = start[k] / scale[k];
  ceres::Problem problem;
  for (const FitPoint& p : s.data->points) {
    std::vector<double*> blocks;
    for (int k = 0; k < kFitKeyCount; ++k) blocks.push_back(&u[k]);
    problem.AddResidualBlock(new PointCost(p, s.breakdown, s.model.ref_temp, scale), nullptr,
                             blocks);
  }
  for (int k = 0; k < kFitKeyCount; ++k) {
    if (!s.free[k]) problem.SetParameterBlockConstant(&u[k]);
  }
  auto bound = [&](FitKey key, double lo, double hi) {
    if (!s.free[Index(key)]) return;
    problem.SetParameterLowerBound(&u[Index(key)], 0, lo / scale[Index(key)]);
    problem.SetParameterUpperBound(&u[Index(key)], 0, hi / scale[Index(key)]);
  };
  bound(FitKey::kIdeality, 0.05, 100);
  bound(FitKey::kBreakdownIdeality, 0.01, 1e4);
  bound(FitKey::kSeriesRes, 0, 1e12);
  bound(FitKey::kBreakdownV, 1e-6, 1e9);
  bound(FitKey::kBandgap, 1e-3, 50);
  ceres::Solver::Options o;
  o.minimizer_type = ceres::TRUST_REGION;
  o.trust_region_strategy_type = ceres::LEVENBERG_MARQUARDT;
  o.linear_solver_type = ceres::DENSE_QR;
  o.max_num_iterations = options.max_iterations;
  o.function_tolerance = options.function_tolerance;
  o.gradient_tolerance = 1e-16;
  o.parameter_tolerance = options.parameter_tolerance;
  o.logging_type = ceres::SILENT;
  o.num_threads = 1;
  ceres::Solver::Summary summary;
  ceres::Solve(o, &problem, &summary);
  for (int k = 0; k < kFitKeyCount; ++k) out.x[k] = u[k] * scale[k];
  out.converged = summary.termination_type == ceres::CONVERGENCE;
  out.iterations = static_cast<int>(summary.iterations.size()) - 1;
  out.termination = summary.message;
  out.ssr = 2 * summary.final_cost;
  const std::vector<FitKey> keys = FreeKeys(s);
  if (!out.converged || keys.empty()) return out;
  ceres::Covariance::Options co;
  co.algorithm_type = ceres::DENSE_SVD;
  co.num_threads = 1;
  ceres::Covariance covariance(co);
  std::vector<std::pair<const double*, const double*>> pairs;
  for (FitKey a : keys) {
    for (FitKey b : keys) {
      if (Index(a) <= Index(b)) pairs.emplace_back(&u[Index(a)], &u[Index(b)]);
    }
  }
  if (!covariance.Compute(pairs, &problem)) return out;
  const auto n = static_cast<Eigen::Index>(keys.size());
  out.covariance.resize(n, n);
  for (Eigen::Index a = 0; a < n; ++a) {
    for (Eigen::Index b = a; b < n; ++b) {
      const int ka = Index(keys[static_cast<size_t>(a)]);
      const int kb = Index(keys[static_cast<size_t>(b)]);
      double c = 0;
      covariance.GetCovarianceBlock(&u[ka], &u[kb], &c);
      out.covariance(a, b) = out.covariance(b, a) = c * scale[ka] * scale[kb];
    }
  }
  out.covariance_ok = true;
  return out;
}

// The keys in play when none are named (cli.md, "--fit"): see docs/fit.md.
void DefaultKeys(const FitData& data, const FitOptions& options, Setup* s) {
  int forward = 0, reverse = 0;
  std::set<double> temps, forward_temps;
  for (const FitPoint& p : data.points) {
    temps.insert(p.temp);
    if (p.v > 0) ++forward, forward_temps.insert(p.temp);
    if (p.v < 0) ++reverse;
  }
  auto want = [&](FitKey key) {
    if (!options.held[Index(key)]) s->free[Index(key)] = true;
  };
  if (forward >= 2) want(FitKey::kSatCurrent), want(FitKey::kIdeality);
  // One forward point fixes one of the two when the other is held.
  if (forward == 1 && options.held[Index(FitKey::kIdeality)]) want(FitKey::kSatCurrent);
  if (forward == 1 && options.held[Index(FitKey::kSatCurrent)]) want(FitKey::kIdeality);
  if (forward >= 3) want(FitKey::kSeriesRes);
  if (forward_temps.size() >= 2) want(FitKey::kBandgap), want(FitKey::kSatTempExp);
  (void)reverse;
}

// Breakdown points under the start of the forward keys; their temperatures and currents.
struct BreakdownCount {
  int points = 0;
  std::set<double> temps;
  int most_in_one_temp = 0;
  // |i| of the breakdown point nearest 1 mA (in log) at the temperature nearest ref_temp:
  // a datasheet's test current, where breakdown_i is held unless written.
  double test_current = 0;
};
BreakdownCount CountBreakdown(const Setup& s) {
  fit_internal::StartInput in;
  in.points = &s.data->points;
  in.model = s.model;
  in.free = s.free;
  const Params x = fit_internal::StartValues(in);
  BreakdownCount c;
  std::map<double, std::set<double>> currents;
  for (const FitPoint& p : s.data->points) {
    if (!fit_internal::IsBreakdownPoint(x, s.model.ref_temp, p)) continue;
    ++c.points;
    c.temps.insert(p.temp);
    currents[p.temp].insert(p.i);
  }
  for (const auto& [t, set] : currents) {
    c.most_in_one_temp = std::max(c.most_in_one_temp, static_cast<int>(set.size()));
  }
  double nearest_temp = 0, best = INFINITY;
  for (double t : c.temps) {
    if (std::fabs(t - s.model.ref_temp) < best)
      best = std::fabs(t - s.model.ref_temp), nearest_temp = t;
  }
  best = INFINITY;
  for (double i : currents[nearest_temp]) {
    const double distance = std::fabs(std::log(-i / 1e-3));
    if (distance < best) best = distance, c.test_current = -i;
  }
  return c;
}

SourceLocation LastRow(const FitData& data) {
  SourceLocation where = data.points.back().v_where;
  where.column = 1;
  return where;
}

// The mean variance of the residuals that rounding the voltages to their written digits
// gives: a uniform error of half-width d has variance d^2/3, and moves ln I by d times the
// law's slope dlnI/dV = G / (I * (1 + rs*G)) at the point. 0 when no cell has digits.
double DigitsVariance(const Setup& s, const Params& x) {
  double sum = 0;
  for (const FitPoint& p : s.data->points) {
    if (!(p.v_resolution > 0)) return 0;
    const fit_internal::PointLaw law(x, s.breakdown, p.temp, s.model.ref_temp);
    const fit_internal::PointLaw::At at = law.Evaluate(law.JunctionAt(p.v));
    const double slope = std::fabs(at.slope / (at.current * (1 + law.rs * at.slope)));
    const double var = p.weight * (p.v_resolution * slope) * (p.v_resolution * slope) / 3;
    if (!std::isfinite(var)) return 0;
    sum += var;
  }
  return sum / static_cast<double>(s.data->points.size());
}

FitResult MakeResult(const Setup& s, const Solved& solved, std::vector<UndeterminedKey> held) {
  FitResult r;
  r.model = fit_internal::FromParams(solved.x, s.model, s.breakdown);
  // Keys not fitted keep their given values exactly (not through exp(log(value))).
  for (int k = 0; k < kFitKeyCount; ++k) {
    if (!s.free[k] && (k != Index(FitKey::kBreakdownV) || s.breakdown)) {
      SetFitKey(&r.model, static_cast<FitKey>(k), GetFitKey(s.model, static_cast<FitKey>(k)));
    }
  }
  r.undetermined = std::move(held);
  r.converged = solved.converged;
  r.iterations = solved.iterations;
  r.termination = solved.termination;
  const std::vector<FitKey> keys = FreeKeys(s);
  const int n = static_cast<int>(s.data->points.size());
  r.degrees_of_freedom = n - static_cast<int>(keys.size());
  r.exact = r.degrees_of_freedom == 0;
  double weights = 0;
  for (const FitPoint& p : s.data->points) weights += p.weight;
  r.residual_rms = std::sqrt(solved.ssr / weights);
  double t = 0, s2 = 0;
  // The linearised covariance s^2 (J'J)^-1 with s^2 estimated from the residuals, hence
  // Student's t on N - p degrees of freedom, not the normal quantile (G. A. F. Seber and
  // C. J. Wild, "Nonlinear Regression", Wiley 1989, chapter 5; D. M. Bates and D. G. Watts,
  // "Nonlinear Regression Analysis and Its Applications", Wiley 1988, chapter 2 — both
  // recalled from memory).
  if (r.degrees_of_freedom > 0) {
    const boost::math::students_t dist(r.degrees_of_freedom);
    t = boost::math::quantile(boost::math::complement(dist, (1 - kConfidence) / 2));
    s2 = solved.ssr / r.degrees_of_freedom;
  } else if (const double digits = DigitsVariance(s, solved.x); digits > 0) {
    // An exact fit leaves no scatter to measure, but the voltages were written to some
    // digits: that rounding, a known scale, is the uncertainty (normal quantile).
    s2 = digits;
    t = boost::math::quantile(
        boost::math::complement(boost::math::normal(), (1 - kConfidence) / 2));
    r.uncertainty_from_digits = true;
  }
  for (size_t c = 0; c < keys.size(); ++c) {
    FittedKey k;
    k.key = keys[c];
    const double theta = solved.x[Index(k.key)];
    k.value = IsLogKey(k.key) ? std::exp(theta) : theta;
    if (s2 > 0 && solved.covariance_ok) {
      const auto i = static_cast<Eigen::Index>(c);
      const double se = std::sqrt(std::max(0.0, s2 * solved.covariance(i, i)));
      if (IsLogKey(k.key)) {
        k.std_error = k.value * se;  // delta method: d exp(theta) = exp(theta) d theta
        k.low = std::exp(theta - t * se);
        k.high = std::exp(theta + t * se);
      } else {
        k.std_error = se;
        k.low = theta - t * se;
        k.high = theta + t * se;
      }
    }
    r.keys.push_back(k);
  }
  for (const FitPoint& p : s.data->points) {
    FittedPoint fp;
    fp.measured = p;
    fp.v_model = ModelVoltage(r.model, p.i, p.temp);
    fp.i_model = ModelCurrent(r.model, p.v, p.temp);
    r.points.push_back(fp);
  }
  return r;
}

// A fitted key the points do not pin down: its interval reaches past its own size (or a
// decade either way in log space), or the fit ran into its bound.
std::optional<UndeterminedKey> LooseKey(const FitResult& r) {
  std::optional<UndeterminedKey> worst;
  double worst_ratio = 0;
  for (const FittedKey& k : r.keys) {
    if (!k.std_error) continue;
    double ratio = 0;
    std::string why;
    if (IsLogKey(k.key)) {
      ratio = std::log(*k.high / k.value) / std::log(kLogSpanLimit);
      why =
          fmt::format("its 95 % interval {} .. {} {} spans more than a factor of {:g} either way",
                      PartKeyLiteral(*k.low, FitKeyUnit(k.key)),
                      PartKeyLiteral(*k.high, FitKeyUnit(k.key)), FitKeyUnit(k.key), kLogSpanLimit);
    } else {
      const double scale = k.key == FitKey::kBreakdownTc  ? std::max(std::fabs(k.value), 1e-4)
                           : k.key == FitKey::kSatTempExp ? std::max(std::fabs(k.value), 1.0)
                                                          : std::fabs(k.value);
      ratio = (*k.high - k.value) / scale;
      why = fmt::format("its 95 % interval {} .. {} reaches past its own size",
                        PartKeyLiteral(*k.low, FitKeyUnit(k.key)),
                        PartKeyLiteral(*k.high, FitKeyUnit(k.key)));
    }
    if (k.key == FitKey::kSeriesRes && k.value <= 0) {
      ratio = 2, why = "the fit runs into series_res = 0: the points show no series resistance";
    }
    if (ratio > 1 && ratio > worst_ratio) {
      worst_ratio = ratio;
      worst = UndeterminedKey{k.key, 0, why};
    }
  }
  return worst;
}

// Where an undetermined key is held: the value the caller's model gives it (the default,
// for keys nobody wrote), or for breakdown_v, which has no default, its starting value.
double HeldValue(FitKey key, const Params& start, const DiodeModel& given) {
  if (key == FitKey::kBreakdownV) return start[Index(key)];
  return GetFitKey(given, key);
}

Diagnostic Undetermined(const FitData& data, FitKey key, const std::string& why) {
  return DataError(data.header_where,
                   fmt::format("the points cannot determine {}: {}", FitKeyName(key), why),
                   fmt::format("add points that move {}, or hold it with --set {}=VALUE (in a "
                               "netlist: write it beside fit=)",
                               FitKeyName(key), FitKeyName(key)));
}

}  // namespace

std::string ValidateFitOptions(const FitOptions& o) {
  if (!(o.max_iterations > 0)) {
    return fmt::format("max_iterations = {} must be > 0", o.max_iterations);
  }
  if (!(o.function_tolerance > 0)) {
    return fmt::format("function_tolerance = {:g} must be > 0", o.function_tolerance);
  }
  if (!(o.parameter_tolerance > 0)) {
    return fmt::format("parameter_tolerance = {:g} must be > 0", o.parameter_tolerance);
  }
  for (FitKey key : o.keys) {
    if (o.held[Index(key)]) {
      return fmt::format("{} is both held and asked to be fitted", FitKeyName(key));
    }
  }
  return "";
}

Result<FitResult> FitDiode(const FitData& given, const FitOptions& options) {
  if (const std::string problem = ValidateFitOptions(options); !problem.empty()) {
    return DataError(given.header_where, problem);
  }
  // Without a temp column every point is at the part's ref_temp.
  FitData data = given;
  if (!data.has_temp_column) {
    for (FitPoint& p : data.points) p.temp = options.model.ref_temp;
  }
  if (std::vector<Diagnostic> bad = fit_internal::CheckPoints(data); !bad.empty()) return bad;
  Setup s;
  s.data = &data;
  s.model = options.model;
  s.explicit_keys = !options.keys.empty();
  for (FitKey key : options.keys) s.free[Index(key)] = true;
  if (!s.explicit_keys) DefaultKeys(data, options, &s);

  const bool bd_asked = s.free[Index(FitKey::kBreakdownV)] || s.free[Index(FitKey::kBreakdownI)] ||
                        s.free[Index(FitKey::kBreakdownIdeality)] ||
                        s.free[Index(FitKey::kBreakdownTc)];
  const BreakdownCount bd = CountBreakdown(s);
  if (!s.explicit_keys && bd.points > 0) {
    auto want = [&](FitKey key) {
      if (!options.held[Index(key)]) s.free[Index(key)] = true;
    };
    // breakdown_v and breakdown_i enter the law only as ln(Ibr) - Vbr/(nbr*Vt): one is
    // fitted, the other held (breakdown_i, unless breakdown_v is written).
    want(options.held[Index(FitKey::kBreakdownV)] ? FitKey::kBreakdownI : FitKey::kBreakdownV);
    if (!options.held[Index(FitKey::kBreakdownI)] && !s.free[Index(FitKey::kBreakdownI)]) {
      // At kFitDigits digits, as the part line prints it, so that the printed line is the part.
      s.model.breakdown_i =
          std::strtod(fmt::format("{:.{}e}", bd.test_current, kFitDigits - 1).c_str(), nullptr);
    }
    if (bd.most_in_one_temp >= 2) want(FitKey::kBreakdownIdeality);
    if (bd.temps.size() >= 2) want(FitKey::kBreakdownTc);
  }
  s.breakdown = s.model.breakdown_v.has_value() || s.free[Index(FitKey::kBreakdownV)] ||
                (!s.explicit_keys && bd.points > 0) || bd_asked;
  if (s.breakdown && !s.model.breakdown_v) s.model.breakdown_v = 0.0;

  // Problems the explicit key list can have before any fit.
  if (s.explicit_keys) {
    std::set<double> temps;
    for (const FitPoint& p : data.points) temps.insert(p.temp);
    for (FitKey key : {FitKey::kBandgap, FitKey::kSatTempExp, FitKey::kBreakdownTc}) {
      if (!s.free[Index(key)] || temps.size() >= 2) continue;
      return DataError(data.has_temp_column ? data.temp_where : data.header_where,
                       fmt::format("every point is at {:g} C, but {} needs points at two or more "
                                   "temperatures",
                                   *temps.begin(), FitKeyName(key)),
                       data.has_temp_column
                           ? "add points at another temperature, or leave the key out of --fit"
                           : "add a temp column and points at another temperature, or leave the "
                             "key out of --fit");
    }
    if (bd_asked && bd.points == 0) {
      return DataError(
          data.header_where,
          "breakdown keys are asked for but no point is in breakdown (a reverse "
          "point whose current the leakage cannot carry)",
          "add points near v = -breakdown_v, or leave the breakdown keys out of --fit");
    }
  }
  std::vector<UndeterminedKey> held;
  const int n_points = static_cast<int>(data.points.size());
  {
    std::vector<FitKey> keys = FreeKeys(s);
    if (static_cast<int>(keys.size()) > n_points) {
      if (s.explicit_keys) {
        return DataError(LastRow(data),
                         fmt::format("{} point{} determine at most {} key{}, but {} are asked for "
                                     "({})",
                                     n_points, n_points == 1 ? "" : "s", n_points,
                                     n_points == 1 ? "" : "s", keys.size(), KeyList(keys)),
                         fmt::format("add at least {} point{}, or fit fewer keys",
                                     static_cast<int>(keys.size()) - n_points,
                                     static_cast<int>(keys.size()) - n_points == 1 ? "" : "s"));
      }
      for (FitKey key : kHoldOrder) {
        if (static_cast<int>(FreeKeys(s).size()) <= n_points) break;
        if (!s.free[Index(key)]) continue;
        s.free[Index(key)] = false;
        held.push_back({key, GetFitKey(s.model, key),
                        fmt::format("{} points cannot determine more keys", n_points)});
      }
    }
  }
  if (FreeKeys(s).empty()) {
    return DataError(data.header_where,
                     fmt::format("nothing to fit: {} point{} and every key held or undetermined",
                                 n_points, n_points == 1 ? "" : "s"),
                     "add forward points (two fix sat_current and ideality)");
  }

  for (int round = 0; round <= kFitKeyCount; ++round) {
    fit_internal::StartInput in;
    in.points = &data.points;
    in.model = s.model;
    in.free = s.free;
    in.breakdown = s.breakdown;
    const Params start = fit_internal::StartValues(in);
    std::string why;
    auto hold = [&](FitKey key, const std::string& reason) {
      s.free[Index(key)] = false;
      const double value = HeldValue(key, start, options.model);
      SetFitKey(&s.model, key, value);
      held.push_back({key, value, reason});
    };
    if (std::optional<FitKey> key = DependentKey(s, start, &why)) {
      if (s.explicit_keys) return Undetermined(data, *key, why);
      hold(*key, why);
      if (FreeKeys(s).empty()) break;
      continue;
    }
    const Solved solved = Solve(s, start, options);
    if (!solved.converged) return MakeResult(s, solved, held);
    if (std::optional<FitKey> key = DependentKey(s, solved.x, &why)) {
      if (s.explicit_keys) return Undetermined(data, *key, why);
      hold(*key, why);
      continue;
    }
    // Ceres refuses the covariance of a nearly dependent set of keys that the test above let
    // pass: the most dependent key is then held as well, under a looser test.
    if (!solved.covariance_ok && n_points > static_cast<int>(FreeKeys(s).size())) {
      std::optional<FitKey> key = DependentKey(s, solved.x, &why, kLooseRankTolerance);
      for (FitKey k : kHoldOrder) {
        if (!key && s.free[Index(k)]) key = k;
      }
      why = "the points fix it only together with other keys (no covariance)";
      if (s.explicit_keys) return Undetermined(data, *key, why);
      hold(*key, why);
      if (FreeKeys(s).empty()) break;
      continue;
    }
    FitResult result = MakeResult(s, solved, held);
    if (std::optional<UndeterminedKey> loose = LooseKey(result)) {
      if (s.explicit_keys) return Undetermined(data, loose->key, loose->why);
      hold(loose->key, loose->why);
      if (FreeKeys(s).empty()) break;
      continue;
    }
    return result;
  }
  return DataError(data.header_where, "the points determine none of the keys in play",
                   "add forward points (two fix sat_current and ideality)");
}

}  // namespace knee
