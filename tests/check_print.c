/* check_print.c - unit tests of the writers: the text form of typical model
 * expressions (and that it parses back to the same node), LaTeX spellings,
 * and C output that a C compiler turns into the engine's own numbers.
 *
 * The expected text is the format of LANGUAGE.md; each expected string was
 * checked by hand to denote the same expression as its input (elementary
 * algebra; common practice, no source), and the round trip re-checks that. */

#include <check.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "check_suites.h"
#include "eval.h"
#include "expr.h"
#include "print.h"
#include "session.h"

static session *sess;
static expr_ctx *ctx;
static FILE *sink;

/* A model in an invented scenario: a variance v of square-root type and an
 * asset S driven by it (the shape of Heston 1993), plus free parameters. */
static const char *model =
	"param kappa, theta, mu, sigma, r, K, a, b, x, d1, sigma1\n"
	"param T > 0\n"
	"noise W, B\n"
	"dv = kappa*(theta - v)*dt + sigma*sqrt(v)*dB\n"
	"dS = mu*S*dt + sqrt(v)*S*dW\n"
	"assume v > 0, S > 0\n"
	"func f(t, x)\n";

static void setup(void)
{
	sink = fopen("/dev/null", "w");
	ck_assert_ptr_nonnull(sink);
	session_options options = {.out = sink, .err = stderr, .format = FORMAT_TEXT, .seed = 1};
	sess = session_new(&options);
	ck_assert_ptr_nonnull(sess);
	ck_assert_int_eq(session_run(sess, model, strlen(model), "model"), SESSION_OK);
	ctx = session_expr_ctx(sess);
}

static void teardown(void)
{
	session_free(sess);
	fclose(sink);
	sess = NULL;
	ctx = NULL;
}

static const expr *parse(const char *text)
{
	const expr *e = session_expr(sess, text);
	ck_assert_msg(e != NULL, "'%s' did not parse", text);
	return e;
}

/* input prints as expected in format, and (for text) reads back as the same node */
static void expect_print(const char *input, prn_format format, const char *expected)
{
	const expr *e = parse(input);
	char *got = prn_expr(ctx, e, format);
	ck_assert_msg(got && strcmp(got, expected) == 0, "%s printed as '%s', expected '%s'", input,
		      got ? got : "(null)", expected);
	if (format == PRN_TEXT) {
		const expr *back = session_expr(sess, got);
		ck_assert_msg(back == e, "'%s' printed as '%s' does not read back to the same node",
			      input, got);
	}
	free(got);
}

START_TEST(test_text)
{
	/* the mean-reverting drift keeps its factor: kappa*(theta - v) */
	expect_print("kappa*(theta - v)", PRN_TEXT, "kappa*(theta - v)");
	expect_print("kappa*theta - kappa*v", PRN_TEXT, "kappa*(theta - v)");
	expect_print("kappa*theta - kappa*v + sigma", PRN_TEXT, "sigma + kappa*(theta - v)");
	/* the log-price drift (Shreve II, 4.4, from memory): mu - sigma^2/2 */
	expect_print("mu - sigma^2/2", PRN_TEXT, "mu - 1/2*sigma^2");
	expect_print("1/sqrt(v)", PRN_TEXT, "1/sqrt(v)");
	expect_print("v^(-1/2)", PRN_TEXT, "1/sqrt(v)");
	expect_print("x^(3/2)", PRN_TEXT, "x^(3/2)");
	expect_print("exp(-r*t)*S", PRN_TEXT, "exp(-r*t)*S");
	expect_print("Phi(d1)", PRN_TEXT, "Phi(d1)");
	/* d f(t, log S)/dS * S = f_x(t, log S) (chain rule) */
	expect_print("partial(f(t, log(S)), S)*S", PRN_TEXT, "f_x(t, log(S))");
	expect_print("partial(f(t, log(S)), S)", PRN_TEXT, "f_x(t, log(S))/S");
	expect_print("partial(f(t, x), x, t)", PRN_TEXT, "f_tx");
	/* negative and fractional coefficients */
	expect_print("-3/4*a + 2*b", PRN_TEXT, "2*b - 3/4*a");
	expect_print("-x", PRN_TEXT, "-x");
	expect_print("-(a + b)", PRN_TEXT, "-a - b");
	expect_print("-a/(2*b)", PRN_TEXT, "-a/(2*b)");
	expect_print("0.05*x", PRN_TEXT, "1/20*x");
	expect_print("1/(2*a + 2*b)", PRN_TEXT, "1/(2*(a + b))");
	expect_print("sigma1^2/2", PRN_TEXT, "1/2*sigma1^2");
	expect_print("sqrt(8)*x", PRN_TEXT, "2*sqrt(2)*x");
	expect_print("2*sqrt(v)*S", PRN_TEXT, "2*S*sqrt(v)");
	expect_print("abs(1 - x)", PRN_TEXT, "abs(1 - x)");
	expect_print("abs(-2*x)", PRN_TEXT, "abs(2*x)");
	expect_print("x^a", PRN_TEXT, "x^a");
	expect_print("2^x", PRN_TEXT, "2^x");
	expect_print("a*b^(1/3)", PRN_TEXT, "a*b^(1/3)");
	expect_print("log(S)", PRN_TEXT, "log(S)");
	expect_print("1 - 1", PRN_TEXT, "0");
	expect_print("-7/3", PRN_TEXT, "-7/3");
}
END_TEST

/* The Black-Scholes d2 = d1 - sigma sqrt(T) (Black and Scholes 1973; Hull,
 * "Options, Futures, and Other Derivatives", ch. on Black-Scholes-Merton,
 * from memory) should read as written, not as 1 - Phi(sigma*sqrt(T) - d1)
 * (equal by Phi(-x) = 1 - Phi(x), but not the formula of the note). */
START_TEST(test_text_black_scholes)
{
	expect_print("Phi(d1 - sigma*sqrt(T - t))", PRN_TEXT, "Phi(d1 - sigma*sqrt(T - t))");
	expect_print("Phi(x - sigma*sqrt(T - t))", PRN_TEXT, "Phi(x - sigma*sqrt(T - t))");
	/* the order of sigma and sqrt(T) is the printer's choice; no 1 - Phi */
	const char *inputs[] = {"Phi(d1 - sigma*sqrt(T))", "Phi(x - sigma*sqrt(T))"};
	for (size_t i = 0; i < 2; i++) {
		const expr *e = parse(inputs[i]);
		char *text = prn_expr(ctx, e, PRN_TEXT);
		ck_assert_msg(strstr(text, "1 - Phi") == NULL, "%s printed as %s", inputs[i], text);
		ck_assert_msg(session_expr(sess, text) == e, "%s printed as %s", inputs[i], text);
		free(text);
	}
}
END_TEST

/* Plain round trips of expressions whose exact spelling is the printer's
 * choice: print -> parse is the same node. */
START_TEST(test_text_round_trip)
{
	const char *inputs[] = {
		"a/x^2", "x^-3", "exp(-r*(T - t))*K*Phi(x - sigma*sqrt(T - t))",
		"(mu - sigma^2/2)*S + sqrt(v)*S", "sigma*sqrt(v)*a*S", "phi(x)*erf(x)/tanh(x)",
		"(a + b)^(1/2) - (a - b)^(-3/2)", "exp(a)*exp(b)*x^(1/3)", "log(1 + x^2)",
		"sin(x)^2 + cos(x)^2", "1/(1 + exp(-x))", "-(x - 1)^(-1)", "2^(1/2)*3^(1/3)",
		"cosh(x)*sinh(a*b)", "f(t, x)*f(t, 2*x) - f(x, t)", "S^(-1)*v^(-1/2)*kappa",
		"-1/2*v^2 + 3/5*a*v - 7"};
	for (size_t i = 0; i < sizeof inputs / sizeof *inputs; i++) {
		const expr *e = parse(inputs[i]);
		char *text = prn_expr(ctx, e, PRN_TEXT);
		const expr *back = session_expr(sess, text);
		ck_assert_msg(back == e, "'%s' printed as '%s' does not read back", inputs[i], text);
		free(text);
	}
}
END_TEST

/* x/(a+b) + y/(a+b): a sum whose terms share a power of a sum.  The printer
 * must finish (Check's timeout guards) and print something that reads back. */
START_TEST(test_text_common_sum_factor)
{
	const expr *e = parse("a/(a + b) + b/(a + b)");
	char *text = prn_expr(ctx, e, PRN_TEXT);
	ck_assert_ptr_nonnull(text);
	ck_assert_msg(session_expr(sess, text) == e, "printed as '%s'", text);
	free(text);
}
END_TEST

/* A result is laid out whole whatever is pending: the time limit reached
 * while it was being settled (a pending error), or no room left for nodes.
 * The grouping of generic-function terms makes nodes; a NULL from a failing
 * constructor crashed the printer (found by running the hostile corpus with a
 * 0.5 ms time limit).  The error and the limits are as before afterwards. */
START_TEST(test_text_whatever_is_pending)
{
	const expr *e = parse("partial(f(t, x), t) + a*partial(f(t, x), x) + b*x*partial(f(t, x), x)"
			      " + 1/2*sigma^2*partial(f(t, x), x, x) - r*f(t, x)");
	char *plain = prn_expr(ctx, e, PRN_TEXT);
	expr_fail(ctx, EXPR_ERR_INTERRUPTED, "interrupted");
	char *pending = prn_expr(ctx, e, PRN_TEXT);
	ck_assert_str_eq(pending, plain);
	ck_assert_int_eq(expr_error(ctx), EXPR_ERR_INTERRUPTED);
	ck_assert_str_eq(expr_error_message(ctx), "interrupted");
	expr_clear_error(ctx);
	expr_limits *limits = expr_ctx_limits(ctx);
	size_t max_nodes = limits->max_nodes;
	size_t room = expr_node_count(ctx);
	limits->max_nodes = room;
	char *full = prn_expr(ctx, e, PRN_TEXT);
	ck_assert_str_eq(full, plain);
	ck_assert_int_eq(expr_error(ctx), EXPR_OK);
	ck_assert_uint_eq(limits->max_nodes, room);
	limits->max_nodes = max_nodes;
	free(plain);
	free(pending);
	free(full);
}
END_TEST

START_TEST(test_latex_names)
{
	struct {
		const char *name;
		bool time;
		const char *latex;
	} cases[] = {{"sigma1", false, "\\sigma_{1}"}, {"kappa", false, "\\kappa"},
		     {"theta", false, "\\theta"},      {"x", false, "x"},
		     {"v", true, "v_{t}"},	       {"v_0", false, "v_{0}"},
		     {"sigma1", true, "\\sigma_{1,t}"}, {"rho", false, "\\rho"},
		     {"epsilon", false, "\\varepsilon"}, {"Gamma", false, "\\Gamma"}};
	for (size_t i = 0; i < sizeof cases / sizeof *cases; i++) {
		char *got = prn_latex_name(cases[i].name, cases[i].time);
		ck_assert_msg(strcmp(got, cases[i].latex) == 0, "%s -> '%s', expected '%s'",
			      cases[i].name, got, cases[i].latex);
		free(got);
	}
}
END_TEST

START_TEST(test_latex)
{
	/* the example of LANGUAGE.md */
	expect_print("mu - sigma^2/2", PRN_LATEX, "\\mu - \\tfrac{1}{2} \\sigma^{2}");
	expect_print("sigma1^2/2", PRN_LATEX, "\\tfrac{1}{2} \\sigma_{1}^{2}");
	/* states carry the time subscript */
	expect_print("kappa*(theta - v)", PRN_LATEX, "\\kappa \\left(\\theta - v_{t}\\right)");
	expect_print("1/sqrt(v)", PRN_LATEX, "\\frac{1}{\\sqrt{v_{t}}}");
	expect_print("sqrt(2)*x", PRN_LATEX, "\\sqrt{2} x");
	expect_print("Phi(d1)", PRN_LATEX, "\\Phi\\left(d_{1}\\right)");
	expect_print("-a/(2*b)", PRN_LATEX, "-\\frac{a}{2 b}");
	/* exponents hold no stacked fraction; a function followed by a factor is bracketed */
	expect_print("x^(3/2)", PRN_LATEX, "x^{3/2}");
	expect_print("exp(-a*x/2)", PRN_LATEX, "\\mathrm{e}^{-a x/2}");
	expect_print("x^(a/(a + b))", PRN_LATEX, "x^{a/\\left(a + b\\right)}");
	/* a sum over the bar of an inline fraction keeps its brackets (it lost
	 * them: e^{a - b/4}, found by tests/ref/print_roundtrip.py) */
	expect_print("exp((a - b)/4)", PRN_LATEX, "\\mathrm{e}^{\\left(a - b\\right)/4}");
	expect_print("exp(a/x^(3/2))", PRN_LATEX, "\\mathrm{e}^{a/(x^{3/2})}");
	expect_print("exp(a/sqrt(x))", PRN_LATEX, "\\mathrm{e}^{a/\\sqrt{x}}");
	expect_print("exp(a/(b*x))", PRN_LATEX, "\\mathrm{e}^{a/(b x)}");
	expect_print("log(x)*sin(a)", PRN_LATEX, "\\log\\left(x\\right) \\sin a");
	expect_print("log(x)*a", PRN_LATEX, "a \\log x");
}
END_TEST

/* ------------------------------------------------------------------ C */

/* Expressions for the C test, each with the same formula written by hand in C
 * (the independent check of what the printed C means). */
typedef struct c_case {
	const char *text;
	double (*hand)(const double *vals);
} c_case;

/* the order of the values: kappa theta mu sigma r K a b x T t v S */
static const char *c_names[] = {"kappa", "theta", "mu", "sigma", "r", "K", "a",
				"b",	 "x",	  "T",	"t",	 "v", "S"};
static const double c_values[] = {1.5, 0.04, 0.05, 0.3, 0.02, 95, -0.6, 1.3, 0.7, 1.5, 0.25, 0.09, 100};
enum { KAPPA, THETA, MU, SIGMA, R, K_, A, B, X, T_, TT, V, S_ };
#define NC (sizeof c_names / sizeof *c_names)

static double Phi_(double z) { return 0.5 * erfc(-z / sqrt(2.0)); }
static double h0(const double *p) { return p[KAPPA] * (p[THETA] - p[V]); }
static double h1(const double *p) { return p[MU] - p[SIGMA] * p[SIGMA] / 2; }
static double h2(const double *p) { return 1 / sqrt(p[V]); }
static double h3(const double *p) { return pow(p[X], 1.5); }
static double h4(const double *p) { return exp(-p[R] * p[TT]) * p[S_]; }
static double h5(const double *p)
{
	/* the Black-Scholes call S Phi(d1) - K exp(-r tau) Phi(d2) with
	 * d1 = (log(S/K) + (r + sigma^2/2) tau)/(sigma sqrt(tau)), d2 = d1 - sigma sqrt(tau)
	 * (Black and Scholes 1973; Hull, from memory) */
	double tau = p[T_] - p[TT], sq = p[SIGMA] * sqrt(tau);
	double d1 = (log(p[S_] / p[K_]) + (p[R] + p[SIGMA] * p[SIGMA] / 2) * tau) / sq;
	return p[S_] * Phi_(d1) - p[K_] * exp(-p[R] * tau) * Phi_(d1 - sq);
}
static double h6(const double *p) { return exp(-p[X] * p[X] / 2) / sqrt(2 * M_PI); }
static double h7(const double *p) { return -3.0 / 4 * p[A] + 2 * p[B] + 0.05 * p[X]; }
static double h8(const double *p) { return p[A] / (p[X] * p[X]) - 1 / (2 * p[A] + 2 * p[B]); }
static double h9(const double *p) { return erf(p[X]) * tanh(p[A]) + fabs(p[A] - 1) + pow(p[B], 1.0 / 3); }
static double h10(const double *p) { return pow(p[X], p[A]) + pow(2, p[X]) + sqrt(8) * p[X]; }
static double h11(const double *p) { return pow(p[A] + p[B], -3) * sinh(p[X]) * cosh(p[B]) - sin(p[X]) / cos(p[A]); }

static const c_case c_cases[] = {
	{"kappa*(theta - v)", h0},
	{"mu - sigma^2/2", h1},
	{"1/sqrt(v)", h2},
	{"x^(3/2)", h3},
	{"exp(-r*t)*S", h4},
	{"S*Phi((log(S/K) + (r + sigma^2/2)*(T - t))/(sigma*sqrt(T - t))) - "
	 "K*exp(-r*(T - t))*Phi((log(S/K) + (r + sigma^2/2)*(T - t))/(sigma*sqrt(T - t)) - sigma*sqrt(T - t))",
	 h5},
	{"phi(x)", h6},
	{"-3/4*a + 2*b + 0.05*x", h7},
	{"a/x^2 - 1/(2*a + 2*b)", h8},
	{"erf(x)*tanh(a) + abs(a - 1) + b^(1/3)", h9},
	{"x^a + 2^x + sqrt(8)*x", h10},
	{"(a + b)^(-3)*sinh(x)*cosh(b) - sin(x)/cos(a)", h11},
};
#define NCASES (sizeof c_cases / sizeof *c_cases)

/* Write a C program printing every case's printed C expression; compile it
 * with `cc` and extra flags; on success read the numbers it prints. */
static bool compile_and_run(const char *flags, char **printed, double *numbers, char *log, size_t log_size)
{
	char dir[] = "/tmp/itox-check-c-XXXXXX";
	ck_assert_ptr_nonnull(mkdtemp(dir));
	char source[64], program[64], output[64], command[512];
	snprintf(source, sizeof source, "%s/coef.c", dir);
	snprintf(program, sizeof program, "%s/coef", dir);
	snprintf(output, sizeof output, "%s/out.txt", dir);
	FILE *c = fopen(source, "w");
	ck_assert_ptr_nonnull(c);
	fprintf(c, "#include <math.h>\n#include <stdio.h>\n\nint main(void)\n{\n");
	for (size_t i = 0; i < NC; i++)
		fprintf(c, "\tdouble %s = %.17g;\n", c_names[i], c_values[i]);
	for (size_t i = 0; i < NC; i++)
		fprintf(c, "\t(void)%s;\n", c_names[i]);
	for (size_t i = 0; i < NCASES; i++)
		fprintf(c, "\tprintf(\"%%.17g\\n\", (double)(%s));\n", printed[i]);
	fprintf(c, "\treturn 0;\n}\n");
	fclose(c);
	snprintf(command, sizeof command, "cc %s -o %s %s -lm > %s/cc.log 2>&1 && %s > %s", flags,
		 program, source, dir, program, output);
	bool ok = system(command) == 0;
	snprintf(command, sizeof command, "%s/cc.log", dir);
	FILE *cc_log = fopen(command, "r");
	size_t n = cc_log ? fread(log, 1, log_size - 1, cc_log) : 0;
	log[n] = '\0';
	if (cc_log)
		fclose(cc_log);
	if (ok) {
		FILE *out = fopen(output, "r");
		ck_assert_ptr_nonnull(out);
		for (size_t i = 0; i < NCASES; i++)
			ck_assert_int_eq(fscanf(out, "%lf", &numbers[i]), 1);
		fclose(out);
	}
	snprintf(command, sizeof command, "rm -rf %s", dir);
	ck_assert_int_eq(system(command), 0);
	return ok;
}

static void print_c_cases(char **printed, const expr **nodes)
{
	for (size_t i = 0; i < NCASES; i++) {
		nodes[i] = parse(c_cases[i].text);
		printed[i] = prn_expr(ctx, nodes[i], PRN_C);
		ck_assert_ptr_nonnull(printed[i]);
	}
}

START_TEST(test_c_evaluates)
{
	char *printed[NCASES];
	const expr *nodes[NCASES];
	double numbers[NCASES];
	char log[4096];
	print_c_cases(printed, nodes);
	bool ok = compile_and_run("", printed, numbers, log, sizeof log);
	ck_assert_msg(ok, "the printed C does not compile: %s", log);
	const expr *vars[NC];
	for (size_t i = 0; i < NC; i++)
		vars[i] = expr_sym(ctx, c_names[i]);
	for (size_t i = 0; i < NCASES; i++) {
		bool evaluated = false;
		double engine = eval_at(ctx, nodes[i], NC, vars, c_values, &evaluated);
		double hand = c_cases[i].hand(c_values);
		ck_assert(evaluated);
		double scale = fmax(1.0, fabs(hand));
		ck_assert_msg(fabs(numbers[i] - engine) <= 1e-12 * scale,
			      "C '%s' of '%s' gives %.17g, eval_at %.17g", printed[i], c_cases[i].text,
			      numbers[i], engine);
		ck_assert_msg(fabs(hand - engine) <= 1e-12 * scale,
			      "'%s': eval_at %.17g, the hand-written formula %.17g", c_cases[i].text,
			      engine, hand);
		free(printed[i]);
	}
}
END_TEST

/* LANGUAGE.md promises C99 that needs only <math.h>: it must compile as ISO
 * C99 (where M_PI and M_SQRT2 are not defined). */
START_TEST(test_c_is_c99)
{
	char *printed[NCASES];
	const expr *nodes[NCASES];
	double numbers[NCASES];
	char log[4096];
	print_c_cases(printed, nodes);
	bool ok = compile_and_run("-std=c99 -pedantic-errors", printed, numbers, log, sizeof log);
	ck_assert_msg(ok, "the printed C is not ISO C99: %s", log);
	for (size_t i = 0; i < NCASES; i++)
		free(printed[i]);
}
END_TEST

START_TEST(test_c_forms)
{
	/* squares as products, halves as 0.5 (the example of LANGUAGE.md) */
	expect_print("mu - sigma^2/2", PRN_C, "mu - 0.5*sigma*sigma");
	expect_print("kappa*(theta - v)", PRN_C, "kappa*(theta - v)");
	expect_print("1/sqrt(v)", PRN_C, "1/sqrt(v)");
}
END_TEST

Suite *print_suite(void)
{
	Suite *suite = suite_create("print");
	TCase *tc = tcase_create("core");
	tcase_add_checked_fixture(tc, setup, teardown);
	tcase_set_timeout(tc, 30);
	tcase_add_test(tc, test_text);
	tcase_add_test(tc, test_text_black_scholes);
	tcase_add_test(tc, test_text_round_trip);
	tcase_add_test(tc, test_text_whatever_is_pending);
	tcase_add_test(tc, test_latex_names);
	tcase_add_test(tc, test_latex);
	tcase_add_test(tc, test_c_evaluates);
	tcase_add_test(tc, test_c_is_c99);
	tcase_add_test(tc, test_c_forms);
	suite_add_tcase(suite, tc);
	/* the printer must not hang: the default 4 s timeout is the guard */
	TCase *hang = tcase_create("termination");
	tcase_add_checked_fixture(hang, setup, teardown);
	tcase_add_test(hang, test_text_common_sum_factor);
	suite_add_tcase(suite, hang);
	return suite;
}
