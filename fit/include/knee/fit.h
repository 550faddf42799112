// Diode part parameters from measured or datasheet points (cli.md, "knee fit";
// docs/fit.md): weighted nonlinear least squares of the contract's diode law with Ceres
// Solver's Levenberg-Marquardt, standard errors from its covariance, and an account of the
// keys the points cannot determine.
#pragma once

#include <array>
#include <cstdint>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "knee/circuit.h"
#include "knee/result.h"

namespace knee {

// The model keys a fit can determine, in the order of the part-key table.
enum class FitKey : std::uint8_t {
  kSatCurrent,
  kIdeality,
  kSeriesRes,
  kBreakdownV,
  kBreakdownI,
  kBreakdownIdeality,
  kBreakdownTc,
  kBandgap,
  kSatTempExp,
};
inline constexpr int kFitKeyCount = 9;

const char* FitKeyName(FitKey key);  // "sat_current", ...
const char* FitKeyUnit(FitKey key);  // "A", "Ohm", "V", "1/K", "eV" or ""
std::optional<FitKey> FindFitKey(std::string_view name);
std::vector<std::string> FitKeyNames();
double GetFitKey(const DiodeModel& model, FitKey key);  // breakdown_v: 0 when unset
void SetFitKey(DiodeModel* model, FitKey key, double value);

// One measured point: v and i anode to cathode (passive convention), temp in degC.
struct FitPoint {
  double v = 0;       // V
  double i = 0;       // A
  double temp = 25;   // degC
  double weight = 1;  // relative weight of the point's residual (> 0)
  // Half a unit of the last digit written in the v cell (0: unknown, e.g. computed points):
  // the precision of a datasheet or meter reading, the uncertainty of an exact fit.
  double v_resolution = 0;                                    // V
  SourceLocation v_where, i_where, temp_where, weight_where;  // the cells
};

struct FitData {
  std::vector<FitPoint> points;  // in file order
  bool has_temp_column = false;
  SourceLocation header_where;  // the header row (line, column 1)
  SourceLocation temp_where;    // the temp header cell, when there is one
};

struct FitOptions {
  // The keys to fit. Empty: those the data determine (docs/fit.md, "Which keys are fitted").
  // Given: exactly these; a key among them that the data cannot determine is an error.
  std::vector<FitKey> keys;
  // Every key's value where it is not fitted (held keys, and the keys not in play).
  DiodeModel model;
  // Keys the user wrote (--set, or beside fit= in a netlist): held, never fitted.
  std::array<bool, kFitKeyCount> held{};
  int max_iterations = 500;            // Levenberg-Marquardt iterations, > 0
  double function_tolerance = 1e-15;   // Ceres: relative change of the cost, > 0
  double parameter_tolerance = 1e-13;  // Ceres: relative step size, > 0
};

// "" or a message naming the field, its value and the rule broken.
std::string ValidateFitOptions(const FitOptions& options);

struct FittedKey {
  FitKey key;
  double value = 0;
  // Absent when the fit is exact (no degrees of freedom are left for an uncertainty).
  std::optional<double> std_error;  // in the key's unit (delta method for log-space keys)
  std::optional<double> low, high;  // the 95 % interval (Student t, N - p degrees of freedom)
};

// A key in play that the points cannot determine: held at `value`, never reported fitted.
struct UndeterminedKey {
  FitKey key;
  double value = 0;
  std::string why;  // "its 95 % interval ... includes 0", "moves the model only together ..."
};

struct FittedPoint {
  FitPoint measured;
  double v_model = 0;  // the model's voltage at the measured current (NaN when it has none)
  double i_model = 0;  // the model's current at the measured voltage
};

struct FitResult {
  DiodeModel model;             // the fitted part (held keys as given)
  std::vector<FittedKey> keys;  // the fitted keys, in FitKey order
  std::vector<UndeterminedKey> undetermined;
  std::vector<FittedPoint> points;  // in file order
  bool converged = false;           // false: the numbers are not a fit (exit 1)
  bool exact = false;               // as many points as fitted keys
  int degrees_of_freedom = 0;       // points - fitted keys
  double residual_rms = 0;          // root mean square of ln(I_model / I) (weighted)
  // An exact fit's uncertainty is that of the voltages' written digits (none when unknown).
  bool uncertainty_from_digits = false;
  int iterations = 0;       // Levenberg-Marquardt iterations of the last fit
  std::string termination;  // Ceres' account of how the last fit ended
};

// Checks the points (docs/fit.md, "Data the fit refuses") and fits. Bad data, and keys the
// points cannot determine when they were asked for, are errors located at the data.
Result<FitResult> FitDiode(const FitData& data, const FitOptions& options);

// The model's current at terminal voltage v and temperature (degC), area 1, and the
// model's terminal voltage at current i (NaN when no voltage carries it).
double ModelCurrent(const DiodeModel& model, double v, double temp_celsius);
double ModelVoltage(const DiodeModel& model, double i, double temp_celsius);

// A key's value as a netlist literal, rounded to kFitDigits significant digits, with an SI
// prefix for keys in A, V and Ohm ("2.5432124n"). The printed part line and fit= in a
// netlist both read these texts, so that they give the same part.
inline constexpr int kFitDigits = 8;
std::string FitValueLiteral(FitKey key, double value);
std::string PartKeyLiteral(double value, std::string_view unit);  // any key by its unit

}  // namespace knee
