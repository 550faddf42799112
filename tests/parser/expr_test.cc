// Expressions: precedence, functions, constants, params in resolution order, cycles,
// undefined names and domain errors.
#include <gtest/gtest.h>

#include <cmath>
#include <numbers>

#include "parser_test_util.h"
#include "test_util.h"

namespace knee {
namespace {

using testing::AllErrors;
using testing::Brief;
using testing::MustBuild;
using testing::OnlyError;

// The value of `expr` as a vsource value (volts, any sign).
double Eval(const std::string& params, const std::string& expr) {
  const Design d = MustBuild(params + "\nvsource V a -> 0 (" + expr + ")\n");
  return d.circuit.elements.empty() ? std::nan("") : d.circuit.elements[0].value;
}
double Eval(const std::string& expr) { return Eval("", expr); }

TEST(ExprTest, Precedence) {
  EXPECT_EQ(Eval("1 + 2 * 3"), 7.0);
  EXPECT_EQ(Eval("(1 + 2) * 3"), 9.0);
  EXPECT_EQ(Eval("10 - 4 - 3"), 3.0);   // left-associative
  EXPECT_EQ(Eval("64 / 4 / 2"), 8.0);   // left-associative
  EXPECT_EQ(Eval("2 ^ 3 ^ 2"), 512.0);  // right-associative: 2^(3^2)
  EXPECT_EQ(Eval("-2 ^ 2"), -4.0);      // '^' binds tighter than unary minus
  EXPECT_EQ(Eval("2 ^ -1"), 0.5);
  EXPECT_EQ(Eval("2 * -3"), -6.0);
  EXPECT_EQ(Eval("--3"), 3.0);  // unary minus twice, in an expression
  EXPECT_EQ(Eval("+3 - -3"), 6.0);
  EXPECT_EQ(Eval("6/2*3"), 9.0);
  EXPECT_EQ(Eval("1k + 4k7"), 5700.0);  // prefixes and letter codes inside expressions
  EXPECT_EQ(Eval("50% * 4"), 2.0);
  EXPECT_EQ(Eval("2V * 3"), 6.0);  // units inside expressions are annotations
}

TEST(ExprTest, Functions) {
  EXPECT_EQ(Eval("exp(0)"), 1.0);
  EXPECT_EQ(Eval("ln(1)"), 0.0);
  EXPECT_EQ(Eval("log10(1000)"), 3.0);
  EXPECT_EQ(Eval("sqrt(16)"), 4.0);
  EXPECT_EQ(Eval("abs(-2.5)"), 2.5);
  EXPECT_EQ(Eval("min(3, -1, 2)"), -1.0);
  EXPECT_EQ(Eval("max(3, -1, 2)"), 3.0);
  EXPECT_EQ(Eval("pow(2, 10)"), 1024.0);
  EXPECT_CLOSE(Eval("exp(ln(5))"), 5.0, 1e-15, 0);
  EXPECT_EQ(Eval("max(1, 2) * min(3, 4) + sqrt(abs(-9))"), 9.0);
}

TEST(ExprTest, Constants) {
  EXPECT_EQ(Eval("pi"), std::numbers::pi);
  // CODATA 2018 exact values (SI 2019 redefinition).
  EXPECT_EQ(Eval("k_boltzmann"), 1.380649e-23);
  EXPECT_EQ(Eval("q_electron"), 1.602176634e-19);
  // Thermal voltage at 300 K: k*T/q = 25.852 mV (recalled from memory; checked by the
  // formula, not by the digits).
  EXPECT_CLOSE(Eval("k_boltzmann * 300 / q_electron"), 0.025852, 1e-4, 0);
}

TEST(ExprTest, ParamsResolveInDependencyOrder) {
  // Used before their definition: the file order does not matter.
  const double v = Eval("param r = p + q\nparam q = 2 * p\nparam p = 3\n", "r");
  EXPECT_EQ(v, 9.0);
  const Design d = MustBuild("param R = 4k7\nresistor R1 a -> 0 R\nvsource V a -> 0 1\n");
  EXPECT_EQ(d.circuit.elements[0].value, 4700.0);
}

TEST(ExprTest, CycleListsTheNames) {
  const auto e = AllErrors("param a = b + 1\nparam b = c\nparam c = 2 * a\n");
  EXPECT_EQ(OnlyError(e), "1:7: params depend on each other in a cycle: a -> b -> c -> a");
  ASSERT_EQ(e[0].notes.size(), 2u);
  EXPECT_EQ(e[0].notes[0].first.line, 2);
  EXPECT_EQ(e[0].notes[1].first.line, 3);
  EXPECT_EQ(OnlyError(AllErrors("param a = a\n")),
            "1:7: params depend on each other in a cycle: a -> a");
}

TEST(ExprTest, UndefinedParamWithSuggestion) {
  const auto e = AllErrors("param Rprot = 4k7\nresistor R a -> 0 (2 * Rprto)\n");
  EXPECT_EQ(OnlyError(e), "2:24: undefined param 'Rprto'");
  EXPECT_EQ(e[0].hint, "did you mean 'Rprot'?");
  const auto f = AllErrors("vsource V a -> 0 Vcc\n");
  EXPECT_EQ(OnlyError(f), "1:18: undefined param 'Vcc'");
  EXPECT_EQ(f[0].hint, "");
}

TEST(ExprTest, NamesThatAreNotParams) {
  EXPECT_EQ(OnlyError(AllErrors("vsource V a -> 0 1\nparam x = V * 2\n")),
            "2:11: 'V' is a vsource, not a param; an expression can use params and the "
            "constants pi, k_boltzmann and q_electron");
  EXPECT_EQ(OnlyError(AllErrors("param x = a.v\n")),
            "1:11: 'a.v' is a quantity; a value can use params only");
}

TEST(ExprTest, DomainErrorsAtTheirPlace) {
  EXPECT_EQ(OnlyError(AllErrors("param x = 1 / (2 - 2)\n")), "1:13: division by zero (1 / 0)");
  EXPECT_EQ(OnlyError(AllErrors("param x = ln(-2)\n")),
            "1:11: ln of a number that is not positive (-2)");
  EXPECT_EQ(OnlyError(AllErrors("param x = log10(0)\n")),
            "1:11: log10 of a number that is not positive (0)");
  EXPECT_EQ(OnlyError(AllErrors("param x = sqrt(-1)\n")), "1:11: sqrt of a negative number (-1)");
  EXPECT_EQ(OnlyError(AllErrors("param x = exp(1000)\n")),
            "1:11: exp(1000) is not a finite number");
  EXPECT_EQ(OnlyError(AllErrors("param x = (-8) ^ 0.5\n")),
            "1:16: -8 ^ 0.5 is not a finite number");
  EXPECT_EQ(OnlyError(AllErrors("param x = 1e300 * 1e300\n")),
            "1:17: the product 1e+300 * 1e+300 is not a finite number");
}

TEST(ExprTest, AParamThatFailsIsReportedOnce) {
  // b and c depend on the failing a: only a's error is shown.
  const auto e = AllErrors("param a = 1/0\nparam b = a + 1\nparam c = b\nvsource V x -> 0 c\n");
  EXPECT_EQ(OnlyError(e), "1:12: division by zero (1 / 0)");
}

TEST(ExprTest, SyntaxErrors) {
  EXPECT_EQ(OnlyError(AllErrors("param x = 1 +\n")),
            "1:14: expected a number, a name or '(' but found the end of the line");
  EXPECT_EQ(OnlyError(AllErrors("param x = (1 + 2\n")),
            "1:11: unclosed '('; expected ')' before the end of the line");
  EXPECT_EQ(OnlyError(AllErrors("param x = 1 + 2)\n")),
            "1:16: expected an operator or the end of the line after the value of param 'x' "
            "but found ')'");
  EXPECT_EQ(OnlyError(AllErrors("param x 5\n")),
            "1:9: expected '=' after the param name 'x' but found '5'");
  const auto f = AllErrors("param x = sqr(2)\n");
  EXPECT_EQ(OnlyError(f),
            "1:11: unknown function 'sqr'; expected one of exp, ln, log10, sqrt, abs, min, max, "
            "pow");
  EXPECT_EQ(f[0].hint, "did you mean 'sqrt'?");
  EXPECT_EQ(OnlyError(AllErrors("param x = pow(2)\n")),
            "1:11: function 'pow' takes 2 arguments, found 1");
  EXPECT_EQ(OnlyError(AllErrors("param x = min(2)\n")),
            "1:11: function 'min' takes at least 2 arguments, found 1");
  EXPECT_EQ(OnlyError(AllErrors("param x = exp\n")),
            "1:11: function 'exp' needs its arguments in parentheses, e.g. exp(1)");
  EXPECT_EQ(OnlyError(AllErrors("param x = max(1 2)\n")),
            "1:17: expected ',' or ')' in the arguments of 'max' but found '2'");
}

TEST(ExprTest, KelvinAndCelsiusAreRefusedInsideExpressions) {
  const auto e = AllErrors("resistor R a -> 0 (2 * 1K)\n");
  EXPECT_EQ(OnlyError(e),
            "1:25: unit 'K' is not allowed inside an expression (no kelvin conversion happens "
            "there)");
  EXPECT_EQ(e[0].hint, "did you mean 1k (kilo)? K is kelvin");
  EXPECT_EQ(OnlyError(AllErrors("param t = 85C\n")),
            "1:13: unit 'C' is not allowed inside an expression; temperatures there are plain "
            "numbers in degrees Celsius");
}

}  // namespace
}  // namespace knee
