// knee spread: the file's analysis (bias point or sweeps) once per sample of its vary
// lines, Monte Carlo or corners, on worker threads (docs/spread.md).
#include <fmt/format.h>

#include <algorithm>
#include <atomic>
#include <cmath>
#include <limits>
#include <memory>
#include <numeric>
#include <thread>

#include "analyses.h"
#include "bounds.h"
#include "eng_format.h"
#include "knee/spread_stats.h"
#include "knee/sweep.h"
#include "spread.h"
#include "stress.h"

namespace knee::cli {
namespace {

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();
constexpr long long kChunk = 64;  // samples a thread takes at a time
constexpr int kMaxCornerDimensions = 16;

// What is judged per sample: an expect statement or one rating of one diode.
struct CheckDef {
  const Expectation* expect = nullptr;
  const StressCheck* stress = nullptr;
};

// A sample's figures from one solution: updates the row's quantities (as values, or as
// running minima and maxima for a sweep) and the checks' margins (running minima).
class SampleFold {
 public:
  SampleFold(const std::vector<QuantityExpr>& show, const std::vector<CheckDef>& checks, bool sweep)
      : show_(show), checks_(checks), sweep_(sweep) {}

  size_t width() const { return show_.size() * (sweep_ ? 2 : 1) + checks_.size(); }

  void Start(double* out) const {
    for (size_t i = 0; i < width(); ++i) out[i] = kNaN;
    first_ = true;
  }

  void Add(const Solution& s, double* out) const {
    const size_t q_count = show_.size();
    for (size_t q = 0; q < q_count; ++q) {
      const double v = show_[q].Evaluate(s);
      if (!sweep_) {
        out[q] = v;
      } else if (first_) {
        out[2 * q] = out[2 * q + 1] = v;
      } else {
        out[2 * q] = std::min(out[2 * q], v);
        out[2 * q + 1] = std::max(out[2 * q + 1], v);
      }
    }
    double* margins = out + q_count * (sweep_ ? 2 : 1);
    for (size_t c = 0; c < checks_.size(); ++c) {
      const double m = Margin(checks_[c], s);
      // A NaN margin (a value that is not finite) is the worst there is.
      if (first_ || std::isnan(m) || m < margins[c]) margins[c] = m;
    }
    first_ = false;
  }

  static double Margin(const CheckDef& c, const Solution& s) {
    if (c.stress) return c.stress->limit - StressValue(*c.stress, s);
    const Expectation& e = *c.expect;
    if (e.is_bound()) {
      const BoundValue v = EvaluateBound(e, s);
      return v.margin;
    }
    const double actual = e.quantity.Evaluate(s);
    const double bound = e.relative ? e.tolerance * std::fabs(e.expected) : e.tolerance;
    return std::isfinite(actual) ? bound - std::fabs(actual - e.expected) : kNaN;
  }

 private:
  const std::vector<QuantityExpr>& show_;
  const std::vector<CheckDef>& checks_;
  bool sweep_;
  mutable bool first_ = true;
};

struct SpreadJob {
  const LoadedDesign* loaded = nullptr;
  const SpreadPlan* plan = nullptr;
  const std::vector<std::vector<SweepAxis>>* sweeps = nullptr;  // empty: the bias point
  const std::vector<QuantityExpr>* show = nullptr;
  const std::vector<CheckDef>* checks = nullptr;
  const AnalysisOptions* options = nullptr;
  std::vector<double> nominal_x;  // unknowns of the nominal solution (warm start)
  // Per draw column j, the secant slopes of the unknowns from the nominal to the column's
  // high (up) and low (down) limit, column-major (j * n); empty when not made.
  std::vector<double> slope_up, slope_down;
  std::vector<double> nominal_draws;
  // Per draw column: whether its secant runs in ln(value) (limits and nominal all > 0:
  // circuit values act by ratios, a junction voltage moves with ln Is), else in the value.
  std::vector<char> log_coordinate;
};

// A draw's distance from the nominal along its column's secant coordinate.
double SecantOffset(double draw, double nominal, bool log_coordinate) {
  return log_coordinate ? std::log(draw / nominal) : draw - nominal;
}

// The most unknowns x draw columns whose secant slopes are kept (8 bytes each, twice).
constexpr double kMaxSlopeEntries = 4e6;

// One worker thread: its own circuit and (for a bias point) its own solver, kept from
// sample to sample; only the drawn values change.
class SpreadWorker {
 public:
  explicit SpreadWorker(const SpreadJob& job)
      : job_(job),
        circuit_(job.plan->circuit()),
        fold_(*job.show, *job.checks, !job.sweeps->empty()) {}

  std::string Init() {
    Result<std::unique_ptr<BiasSolver>> solver = BiasSolver::Create(circuit_, job_.options->solver);
    if (!solver) return solver.errors().front().message;
    solver_ = std::move(solver).value();
    // A sample's report shows the detail of failed solves only.
    solver_->set_describe_converged(false);
    return "";
  }

  // Solves one sample with `draws`; fills `out` (quantities and margins); "" or why not.
  std::string Solve(std::span<const double> draws, double* out) {
    fold_.Start(out);
    if (job_.sweeps->empty()) return SolveBias(draws, out);
    return SolveSweeps(draws, out);
  }

  // The unknowns of the last converged bias point (empty when there is none).
  std::vector<double> Unknowns() const {
    if (!solved_) return {};
    auto x = solver_->unknowns();
    return {x.begin(), x.end()};
  }

  SweepStats stats;  // of every solve of this worker's samples

 private:
  std::string SolveBias(std::span<const double> draws, double* out) {
    std::string problem = job_.plan->Apply(draws, {}, &circuit_);
    if (!problem.empty()) return problem;
    solver_->UpdateValues(circuit_);
    SolveSummary summary = solver_->Solve(&solution_, WarmStart(draws), /*allow_aids=*/false);
    if (summary.status != SolveStatus::kConverged) {
      const int warm_steps = summary.newton_steps;
      summary = solver_->Solve(&solution_);
      summary.newton_steps += warm_steps;
    }
    AddSolveToStats(summary, &stats);
    if (summary.status != SolveStatus::kConverged) ++stats.failed;
    solved_ = summary.status == SolveStatus::kConverged;
    if (!solved_) {
      return fmt::format("{}: {}", ToString(summary.status), summary.detail);
    }
    fold_.Add(solution_, out);
    return "";
  }

  std::string SolveSweeps(std::span<const double> draws, double* out) {
    std::string problem = job_.plan->Apply(draws, {}, &circuit_);
    if (!problem.empty()) return problem;
    std::string failure;
    for (const std::vector<SweepAxis>& axes : *job_.sweeps) {
      SweepGrid grid;
      bool any_param = false;
      for (const SweepAxis& a : axes) {
        grid.axes.push_back(a.values);
        any_param |= a.target.kind == SweepTarget::Kind::kParam;
      }
      SweepOptions sweep_options;
      sweep_options.jobs = 1;
      const SweepBlocks blocks = CutIntoBlocks(grid, sweep_options.block_size);
      ApplyPoint apply = [&](std::span<const double> values, Circuit* c) -> std::string {
        if (any_param || job_.plan->has_param()) {
          std::vector<Override> extra;
          for (size_t a = 0; a < axes.size(); ++a) {
            if (axes[a].target.kind == SweepTarget::Kind::kParam) {
              extra.push_back({axes[a].target.name, FormatRoundTrip(values[a])});
            }
          }
          std::string p = job_.plan->Apply(draws, extra, c);
          if (!p.empty()) return p;
        }
        for (size_t a = 0; a < axes.size(); ++a) {
          std::string p = ApplySweepValue(axes[a].target, values[a], c);
          if (!p.empty()) return p;
        }
        return "";
      };
      PointSink sink = [&](long long, const SolveSummary& summary, const Solution* solution) {
        if (solution) {
          fold_.Add(*solution, out);
        } else if (failure.empty()) {
          failure = fmt::format("{}: {}", ToString(summary.status), summary.detail);
        }
      };
      SweepStats part = RunSweep(circuit_, grid, blocks, 0, blocks.total, apply,
                                 job_.options->solver, sweep_options, sink);
      if (!part.setup_error.empty()) return part.setup_error;
      MergeSweepStats(part, &stats);
    }
    return failure;
  }

  // The nominal unknowns moved by each draw along its column's secant (the high or the
  // low side, as the draw falls): a first-order guess that depends on the draws alone, so
  // a sample's result does not depend on which thread solved it.
  std::span<const double> WarmStart(std::span<const double> draws) {
    if (job_.slope_up.empty()) return job_.nominal_x;
    const size_t n = job_.nominal_x.size();
    start_.assign(job_.nominal_x.begin(), job_.nominal_x.end());
    for (size_t j = 0; j < draws.size(); ++j) {
      if (draws[j] == job_.nominal_draws[j]) continue;
      const double offset =
          SecantOffset(draws[j], job_.nominal_draws[j], job_.log_coordinate[j] != 0);
      const double* slope = (offset > 0 ? job_.slope_up : job_.slope_down).data() + j * n;
      for (size_t u = 0; u < n; ++u) start_[u] += slope[u] * offset;
    }
    return start_;
  }

  const SpreadJob& job_;
  Circuit circuit_;
  SampleFold fold_;
  std::unique_ptr<BiasSolver> solver_;
  Solution solution_;
  bool solved_ = false;
  std::vector<double> start_;  // WarmStart's guess
};

// The secant slopes of job->slope_up and slope_down, from solves of the nominal circuit
// with one draw column at a time at its limit (warm from the nominal). A side whose solve
// fails, or whose limit is the nominal, has slope zero there.
void MakeSecantSlopes(SpreadWorker& probe, const SpreadPlan& plan, std::span<double> scratch,
                      SpreadJob* job) {
  const size_t n = job->nominal_x.size();
  const size_t k = plan.columns().size();
  if (n == 0 || static_cast<double>(n) * static_cast<double>(k) > kMaxSlopeEntries) return;
  std::vector<double> up(n * k, 0.0), down(n * k, 0.0);
  std::vector<char> log_coordinate(k, 0);
  std::vector<double> draws = job->nominal_draws;
  for (size_t j = 0; j < k; ++j) {
    const DrawColumn& c = plan.columns()[j];
    log_coordinate[j] = c.low > 0 && c.nominal > 0 && c.high > 0;
    for (const auto& [limit, slopes] : {std::pair{c.high, &up}, std::pair{c.low, &down}}) {
      const double offset = SecantOffset(limit, c.nominal, log_coordinate[j] != 0);
      if (!(offset != 0.0) || !std::isfinite(offset)) continue;
      draws[j] = limit;
      if (probe.Solve(draws, scratch.data()).empty()) {
        const std::vector<double> x = probe.Unknowns();
        for (size_t u = 0; u < n; ++u) (*slopes)[j * n + u] = (x[u] - job->nominal_x[u]) / offset;
      }
    }
    draws[j] = c.nominal;
  }
  job->slope_up = std::move(up);
  job->slope_down = std::move(down);
  job->log_coordinate = std::move(log_coordinate);
}

std::string CheckName(const CheckDef& c, const Circuit& circuit) {
  if (c.stress) return RatedCheckName(*c.stress, circuit);
  const Expectation& e = *c.expect;
  const std::string unit = e.quantity.unit();
  if (e.is_bound()) {
    const std::string bound =
        e.bound ? e.bound->text() : FormatRoundTrip(e.expected) + (unit.empty() ? "" : " " + unit);
    return fmt::format("{} {} {}", e.quantity.text(),
                       e.relation == Expectation::Relation::kAtMost ? "<=" : ">=", bound);
  }
  return fmt::format("{} = {}{} within {}", e.quantity.text(), FormatRoundTrip(e.expected),
                     unit.empty() ? "" : " " + unit,
                     e.relative ? fmt::format("{:g}%", e.tolerance * 100)
                                : FormatRoundTrip(e.tolerance) + (unit.empty() ? "" : " " + unit));
}

std::string CheckUnit(const CheckDef& c) {
  if (c.stress) return StressUnit(c.stress->quantity);
  return c.expect->quantity.unit();
}

// Statistics of the quantity columns and the checks over the rows of this run.
void Summarize(const std::vector<CheckDef>& checks, const AnalysisOptions& options,
               SpreadReport* r) {
  const size_t draws = r->columns.size();
  const size_t quantities = r->quantities.size();
  std::vector<double> column;
  for (size_t q = 0; q < quantities; ++q) {
    SpreadQuantity& sq = r->quantities[q];
    column.clear();
    for (const auto& row : r->rows) {
      if (std::isfinite(row[draws + q])) column.push_back(row[draws + q]);
    }
    const Moments m = ComputeMoments(column);
    sq.solved = m.count;
    sq.mean = m.mean;
    sq.std_dev = m.std_dev;
    sq.min = m.min;
    sq.max = m.max;
    sq.q_low = SelectedQuantile(column, 0.00135);
    sq.q_median = SelectedQuantile(column, 0.5);
    sq.q_high = SelectedQuantile(column, 0.99865);
  }
  // Ranks of each draw column, centred once (draws are never NaN).
  std::vector<CentredValues> draw_ranks;
  if (!r->corners) {
    std::vector<double> x(r->rows.size());
    for (size_t j = 0; j < draws; ++j) {
      for (size_t i = 0; i < r->rows.size(); ++i) x[i] = r->rows.at(i, j);
      draw_ranks.push_back(Centre(MeanRanks(x)));
    }
  }
  for (size_t c = 0; c < checks.size(); ++c) {
    SpreadCheck& sc = r->checks[c];
    const size_t col = draws + quantities + c;
    sc.samples = static_cast<long long>(r->rows.size());
    std::vector<double> margin(r->rows.size());
    for (size_t i = 0; i < r->rows.size(); ++i) {
      const double m = r->rows.at(i, col);
      margin[i] = m;
      if (m >= 0) ++sc.passing;
      if (!std::isnan(m) && (sc.worst_row < 0 || m < sc.worst_margin)) {
        sc.worst_row = static_cast<long long>(i);
        sc.worst_margin = m;
      }
    }
    sc.yield =
        sc.samples > 0 ? static_cast<double>(sc.passing) / static_cast<double>(sc.samples) : kNaN;
    std::tie(sc.low, sc.high) = WilsonInterval(sc.passing, sc.samples);
    sc.pass = r->yield_target ? sc.low >= *r->yield_target : sc.passing == sc.samples;
    if (sc.worst_row >= 0) {
      // The checked value at the worst sample: the bound (or rating limit) minus the margin.
      const CheckDef& d = checks[c];
      if (d.stress) {
        sc.worst_value = d.stress->limit - sc.worst_margin;
        if (sc.worst_value <= 0) sc.never = StressNeverText(d.stress->quantity);
      } else if (d.expect->is_bound() && !d.expect->bound) {
        sc.worst_value = d.expect->relation == Expectation::Relation::kAtMost
                             ? d.expect->expected - sc.worst_margin
                             : d.expect->expected + sc.worst_margin;
      } else {
        sc.worst_value = kNaN;  // the margin alone is reported
      }
    }
    // Which draws move the margin most: rank correlation, or main effects of corners.
    const bool complete =
        std::none_of(margin.begin(), margin.end(), [](double m) { return std::isnan(m); });
    const CentredValues margin_ranks =
        complete && !r->corners ? Centre(MeanRanks(margin)) : CentredValues();
    for (size_t j = 0; j < draws; ++j) {
      double measure = kNaN;
      if (r->corners) {
        double hi_sum = 0, lo_sum = 0;
        long long hi_n = 0, lo_n = 0;
        for (size_t i = 0; i < r->rows.size(); ++i) {
          if (std::isnan(margin[i])) continue;
          const long long corner = r->first - 1 + static_cast<long long>(i);
          if ((corner >> j) & 1) {
            hi_sum += margin[i];
            ++hi_n;
          } else {
            lo_sum += margin[i];
            ++lo_n;
          }
        }
        if (hi_n > 0 && lo_n > 0) {
          measure = hi_sum / static_cast<double>(hi_n) - lo_sum / static_cast<double>(lo_n);
        }
      } else if (complete) {
        measure = PearsonCorrelation(draw_ranks[j], margin_ranks);
      } else {
        std::vector<double> x(r->rows.size());
        for (size_t i = 0; i < r->rows.size(); ++i) x[i] = r->rows[i][j];
        measure = SpearmanRho(x, margin);
      }
      if (!std::isnan(measure)) sc.movers.push_back({r->columns[j].name, measure});
    }
    std::stable_sort(sc.movers.begin(), sc.movers.end(), [](const auto& a, const auto& b) {
      return std::fabs(a.measure) > std::fabs(b.measure);
    });
    if (sc.movers.size() > 3) sc.movers.resize(3);
  }
  (void)options;
}

}  // namespace

std::optional<double> ParseYieldTarget(const std::string& text, std::string* problem) {
  if (text.empty()) return std::nullopt;
  SourceLocation where;
  where.file = "--yield";
  Result<double> v = ParseNumberText(text, "", "a yield", where);
  if (!v || !(*v > 0 && *v <= 1)) {
    *problem = fmt::format(
        "--yield: '{}' is not a yield in (0, 100 %]; write for example --yield 99.9% or "
        "--yield 0.999",
        text);
    return std::nullopt;
  }
  return *v;
}

SpreadOutcome AnalyzeSpread(const LoadedDesign& loaded,
                            const std::vector<std::vector<SweepAxis>>& sweeps,
                            const std::vector<QuantityExpr>& show, const AnalysisOptions& options) {
  SpreadOutcome out;
  SpreadReport& r = out.report;
  const Design& design = *loaded.design;
  r.title = design.circuit.title;
  r.file = loaded.file;
  r.of = sweeps.empty() ? "bias point" : "sweep";
  r.temp = design.circuit.temp;
  r.corners = options.spread_corners;
  r.seed = options.spread_seed;
  r.varies = design.varies;
  std::string problem;
  r.yield_target = ParseYieldTarget(options.spread_yield, &problem);
  if (!problem.empty()) return out.Fail(problem);
  if (design.varies.empty()) {
    return out.Fail(
        fmt::format("{}: the file has no vary line, so there is nothing to spread; add for example "
                    "'vary R1 ±1%' (docs/spread.md)",
                    loaded.file == "-" ? "<stdin>" : loaded.file));
  }
  SpreadPlan plan;
  problem = plan.Build(design, *loaded.netlist, loaded.overrides);
  if (!problem.empty()) return out.Fail(problem);
  r.columns = plan.columns();
  r.nominal_draws.resize(r.columns.size());
  plan.Nominal(r.nominal_draws);

  const auto dims = static_cast<long long>(r.columns.size());
  if (r.corners) {
    if (dims > kMaxCornerDimensions) {
      return out.Fail(fmt::format(
          "--corners: {} varied values make 2^{} corners, more than the limit of 2^{} = {}; "
          "use Monte Carlo instead (--samples 100000), or fewer vary lines or 'each' draws",
          dims, dims, kMaxCornerDimensions, 1LL << kMaxCornerDimensions));
    }
    r.total = 1LL << dims;
  } else {
    if (options.spread_samples < 1) {
      return out.Fail(fmt::format("--samples: {} is not a count >= 1", options.spread_samples));
    }
    r.total = options.spread_samples;
  }
  int shard = 0, shards = 1;
  if (!ParseShard(options.shard, &shard, &shards, &problem)) return out.Fail(problem);
  const long long begin = r.total * shard / shards;
  const long long end = r.total * (shard + 1) / shards;
  r.first = begin + 1;
  r.csv_header = shard == 0;

  // The checks: expected values at a bias point, bounds always, then the ratings.
  const double derate = options.derate / 100;
  const std::vector<StressCheck> stress = CollectStressChecks(plan.circuit(), derate);
  std::vector<CheckDef> checks;
  for (const Expectation& e : design.expects) {
    if (e.is_bound() || sweeps.empty()) checks.push_back({&e, nullptr});
  }
  // The reverse current of a breakdown diode is reported by bias and sweep, never
  // judged: it has no rating, so it is no check of a sample.
  for (const StressCheck& s : stress) {
    if (s.rated()) checks.push_back({nullptr, &s});
  }
  auto add_quantity = [&](std::string name, const std::string& unit) {
    SpreadQuantity sq;
    sq.name = std::move(name);
    sq.unit = unit;
    r.quantities.push_back(std::move(sq));
  };
  for (const QuantityExpr& q : show) {
    if (sweeps.empty()) {
      add_quantity(q.text(), q.unit());
    } else {
      add_quantity("min(" + q.text() + ")", q.unit());
      add_quantity("max(" + q.text() + ")", q.unit());
    }
  }
  for (const CheckDef& c : checks) {
    SpreadCheck sc;
    sc.rating = c.stress != nullptr;
    sc.name = CheckName(c, plan.circuit());
    sc.unit = CheckUnit(c);
    r.checks.push_back(sc);
  }
  for (size_t q = 0; q < show.size(); ++q) {
    for (const Expectation& e : design.expects) {
      if (!e.is_bound() || e.bound || e.quantity.text() != show[q].text()) continue;
      const double side = e.relation == Expectation::Relation::kAtMost ? 1 : -1;
      const size_t first = sweeps.empty() ? q : 2 * q;
      for (size_t k = first; k < first + (sweeps.empty() ? 1 : 2); ++k) {
        r.quantities[k].bounds.push_back({e.expected, side});
      }
    }
  }

  SpreadJob job;
  job.loaded = &loaded;
  job.plan = &plan;
  job.sweeps = &sweeps;
  job.show = &show;
  job.checks = &checks;
  job.options = &options;

  // The nominal: the file's values, solved once with every aid; its unknowns start each
  // sample of a bias point.
  SpreadWorker nominal(job);
  if (std::string p = nominal.Init(); !p.empty()) return out.Fail(p);
  SampleFold fold(show, checks, !sweeps.empty());
  const size_t width = r.columns.size() + fold.width();
  std::vector<double> nominal_row(fold.width(), kNaN);
  {
    // A bias point's nominal solve must not start from a previous solution: there is none.
    std::string why = nominal.Solve(r.nominal_draws, nominal_row.data());
    if (!why.empty()) {
      out.notes.push_back(
          fmt::format("the nominal circuit has no solution ({}); every sample "
                      "starts from the solver's default guess",
                      why));
    }
  }
  for (size_t q = 0; q < r.quantities.size(); ++q) r.quantities[q].nominal = nominal_row[q];
  // Warm start: the unknowns of the nominal solution.
  if (sweeps.empty()) {
    job.nominal_x = nominal.Unknowns();
    job.nominal_draws = r.nominal_draws;
    if (end - begin > static_cast<long long>(2 * r.columns.size())) {
      MakeSecantSlopes(nominal, plan, nominal_row, &job);
    }
  }

  const long long count = end - begin;
  r.rows.Assign(static_cast<size_t>(count), width, kNaN);
  r.failures.assign(static_cast<size_t>(count), "");
  const int jobs = static_cast<int>(std::max<long long>(
      1, std::min<long long>(
             options.jobs > 0 ? options.jobs : std::max(1u, std::thread::hardware_concurrency()),
             (count + kChunk - 1) / kChunk)));
  std::vector<std::unique_ptr<SpreadWorker>> workers;
  for (int j = 0; j < jobs; ++j) {
    workers.push_back(std::make_unique<SpreadWorker>(job));
    if (std::string p = workers.back()->Init(); !p.empty()) return out.Fail(p);
  }
  std::atomic<long long> next{0};
  auto work = [&](SpreadWorker* w) {
    for (long long chunk = next++; chunk * kChunk < count; chunk = next++) {
      const long long stop = std::min(count, (chunk + 1) * kChunk);
      for (long long i = chunk * kChunk; i < stop; ++i) {
        const std::span<double> row = r.rows[static_cast<size_t>(i)];
        const std::span<double> draws(row.data(), r.columns.size());
        if (r.corners) {
          plan.Corner(begin + i, draws);
        } else {
          plan.Draw(options.spread_seed, begin + i + 1, draws);
        }
        r.failures[static_cast<size_t>(i)] = w->Solve(draws, row.data() + r.columns.size());
      }
    }
  };
  if (jobs == 1) {
    work(workers.front().get());
  } else {
    std::vector<std::thread> threads;
    for (auto& w : workers) threads.emplace_back(work, w.get());
    for (auto& t : threads) t.join();
  }
  for (const std::string& f : r.failures) r.unsolved += f.empty() ? 0 : 1;

  SweepStats all;
  for (const auto& w : workers) MergeSweepStats(w->stats, &all);
  r.account = AccountOf(all, options.solver);

  Summarize(checks, options, &r);
  out.outcome.point_failed = r.unsolved > 0;
  for (const SpreadCheck& c : r.checks) {
    if (c.pass) continue;
    if (c.rating) {
      out.outcome.stress_failed = true;
    } else {
      out.outcome.expect_missed = true;
    }
  }
  for (const VaryLine& v : design.varies) {
    if (!v.note.empty()) {
      out.warnings.push_back(fmt::format("{}:{}:{}: warning: {}", v.where.file.str(),
                                         v.spread_where.line, v.spread_where.column, v.note));
    }
  }
  return out;
}

}  // namespace knee::cli
