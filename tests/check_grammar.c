/* check_grammar.c - unit tests of the parser: every statement form of
 * LANGUAGE.md, the lexical rules, node positions and every class of
 * syntax error, compared through ast_to_sexpr(). */

#include <check.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include "ast.h"
#include "check_suites.h"

#define DEPTH 100

/* The statements of source as S-expressions, one a line, then the error if
 * any as "ERROR line:column[ incomplete]: message". */
static char *parse_text(const char *source, size_t length, int depth)
{
	ast_list list;
	size_t size = 256, used = 0;
	char *out = malloc(size);

	ck_assert_ptr_nonnull(out);
	out[0] = '\0';
	ast_parse(source, length, depth, &list);
	for (size_t i = 0; i <= list.n; i++) {
		char *piece;
		char error[700];

		if (i < list.n) {
			piece = ast_to_sexpr(list.stmts[i]);
		} else if (list.error.present) {
			snprintf(error, sizeof error, "ERROR %d:%d%s: %s", list.error.loc.first_line,
				 list.error.loc.first_column,
				 list.error.incomplete ? " incomplete" : "", list.error.message);
			piece = malloc(strlen(error) + 1);
			ck_assert_ptr_nonnull(piece);
			strcpy(piece, error);
		} else {
			break;
		}
		ck_assert_ptr_nonnull(piece);
		size_t n = strlen(piece);
		while (used + n + 2 > size) {
			size *= 2;
			out = realloc(out, size);
			ck_assert_ptr_nonnull(out);
		}
		if (used > 0)
			out[used++] = '\n';
		memcpy(out + used, piece, n + 1);
		used += n;
		free(piece);
	}
	ast_list_free(&list);
	return out;
}

static char *parse(const char *source)
{
	return parse_text(source, strlen(source), DEPTH);
}

#define PARSES(source, expected)                                                        \
	do {                                                                              \
		char *got_ = parse(source);                                               \
		ck_assert_str_eq(got_, expected);                                         \
		free(got_);                                                               \
	} while (0)

/* ---------------------------------------------------------- expressions */

START_TEST(test_precedence)
{
	PARSES("a + b * c", "(S_EXPR (ADD (NAME a) (MUL (NAME b) (NAME c))))");
	PARSES("a - b - c", "(S_EXPR (SUB (SUB (NAME a) (NAME b)) (NAME c)))");
	PARSES("a / b / c", "(S_EXPR (DIV (DIV (NAME a) (NAME b)) (NAME c)))");
	PARSES("a * b / c - e", "(S_EXPR (SUB (DIV (MUL (NAME a) (NAME b)) (NAME c)) (NAME e)))");
	PARSES("(a + b) * c", "(S_EXPR (MUL (ADD (NAME a) (NAME b)) (NAME c)))");
	PARSES("x^y^z", "(S_EXPR (POW (NAME x) (POW (NAME y) (NAME z))))");
	PARSES("-x^2", "(S_EXPR (NEG (POW (NAME x) (NUM 2))))");
	PARSES("x^-1", "(S_EXPR (POW (NAME x) (NEG (NUM 1))))");
	PARSES("2^-x^2", "(S_EXPR (POW (NUM 2) (NEG (POW (NAME x) (NUM 2)))))");
	PARSES("x^-y*z", "(S_EXPR (MUL (POW (NAME x) (NEG (NAME y))) (NAME z)))");
	PARSES("-a*b", "(S_EXPR (MUL (NEG (NAME a)) (NAME b)))");
	PARSES("a - -b", "(S_EXPR (SUB (NAME a) (NEG (NAME b))))");
	PARSES("+a", "(S_EXPR (NAME a))");
	PARSES("x^(1/2)", "(S_EXPR (POW (NAME x) (DIV (NUM 1) (NUM 2))))");
}
END_TEST

START_TEST(test_numbers_and_names)
{
	PARSES("12 + 0.05 + .5 + 1e-3 + 2.5E+4",
	       "(S_EXPR (ADD (ADD (ADD (ADD (NUM 12) (NUM 0.05)) (NUM .5)) (NUM 1e-3)) (NUM 2.5E+4)))");
	PARSES("3/4", "(S_EXPR (DIV (NUM 3) (NUM 4)))");
	PARSES("dS*dv + dt*dW", "(S_EXPR (ADD (MUL (NAME dS) (NAME dv)) (MUL (NAME dt) (NAME dW))))");
	PARSES("f_x + f_tx + x_1", "(S_EXPR (ADD (ADD (NAME f_x) (NAME f_tx)) (NAME x_1)))");
	PARSES("f_{x1,x2}(t, V_{S,S})", "(S_EXPR (CALL f_{x1,x2} (NAME t) (NAME V_{S,S})))");
	PARSES("Phi(d1) - phi(d2)",
	       "(S_EXPR (SUB (CALL Phi (NAME d1)) (CALL phi (NAME d2))))");
}
END_TEST

START_TEST(test_calls_partial_diff)
{
	PARSES("f(t, log(S))", "(S_EXPR (CALL f (NAME t) (CALL log (NAME S))))");
	PARSES("partial(f(t, x), x)",
	       "(S_EXPR (PARTIAL (CALL f (NAME t) (NAME x)) (NAME x)))");
	PARSES("partial(x^2*y, x, y) + 1",
	       "(S_EXPR (ADD (PARTIAL (MUL (POW (NAME x) (NUM 2)) (NAME y)) (NAME x) (NAME y)) (NUM 1)))");
	PARSES("d(S1)*d(S2)", "(S_EXPR (MUL (DIFF (NAME S1)) (DIFF (NAME S2))))");
	PARSES("d(log(S))*d(log(S))",
	       "(S_EXPR (MUL (DIFF (CALL log (NAME S))) (DIFF (CALL log (NAME S)))))");
	/* with a space, d is the query keyword and takes the whole expression */
	PARSES("d (S1)*d(S2)", "(S_D (MUL (NAME S1) (DIFF (NAME S2))))");
}
END_TEST

/* ---------------------------------------------------------- declarations */

START_TEST(test_declarations)
{
	PARSES("param mu, sigma, r", "(S_PARAM (COND mu) (COND sigma) (COND r))");
	PARSES("param a, b > 0", "(S_PARAM (COND a > (NUM 0)) (COND b > (NUM 0)))");
	PARSES("param rho in [-1, 1]",
	       "(S_PARAM (COND rho in (INTERVAL (NEG (NUM 1)) (NUM 1))))");
	PARSES("param k <= 2*m", "(S_PARAM (COND k <= (MUL (NUM 2) (NAME m))))");
	PARSES("assume S > 0, v > 0", "(S_ASSUME (COND S > (NUM 0)) (COND v > (NUM 0)))");
	PARSES("assume x >= 0; assume y < 1, z <= 2",
	       "(S_ASSUME (COND x >= (NUM 0)))\n(S_ASSUME (COND y < (NUM 1)) (COND z <= (NUM 2)))");
	PARSES("assume x in [a, b]", "(S_ASSUME (COND x in (INTERVAL (NAME a) (NAME b))))");
	PARSES("noise W, B", "(S_NOISE (NAME W) (NAME B))");
	PARSES("corr(W, B) = rho", "(S_CORR (NAME W) (NAME B) (NAME rho))");
	PARSES("func f(t, x)", "(S_FUNC f (NAME t) (NAME x))");
	PARSES("dS = mu*S*dt + sqrt(v)*S*dW",
	       "(S_SDE dS (ADD (MUL (MUL (NAME mu) (NAME S)) (NAME dt)) "
	       "(MUL (MUL (CALL sqrt (NAME v)) (NAME S)) (NAME dW))))");
	PARSES("stratonovich dX = a*X*dt + b*X*dW",
	       "(S_STRAT_SDE dX (ADD (MUL (MUL (NAME a) (NAME X)) (NAME dt)) "
	       "(MUL (MUL (NAME b) (NAME X)) (NAME dW))))");
	PARSES("let Y = log(S)", "(S_LET Y (CALL log (NAME S)))");
	PARSES("measure Q: dW = dZ - lambda*dt, dB = dY - eta*dt",
	       "(S_MEASURE Q (ASSIGN dW (SUB (NAME dZ) (MUL (NAME lambda) (NAME dt)))) "
	       "(ASSIGN dB (SUB (NAME dY) (MUL (NAME eta) (NAME dt)))))");
	PARSES("state x = log(S) where S = exp(x)",
	       "(S_STATE x (CALL log (NAME S)) (ASSIGN S (CALL exp (NAME x))))");
}
END_TEST

/* The declaration example of LANGUAGE.md, comments included. */
START_TEST(test_language_example)
{
	PARSES("param mu, sigma, r, kappa, theta, xi   # real constants\n"
	       "param rho in [-1, 1]                   # a range\n"
	       "assume S > 0, v > 0                    # positivity\n"
	       "noise W, B                             # independent motions\n"
	       "corr(W, B) = rho                       # dW*dB = rho*dt\n"
	       "func f(t, x)                           # an unknown function\n"
	       "dS = mu*S*dt + sqrt(v)*S*dW            # an SDE\n"
	       "dv = kappa*(theta - v)*dt + xi*sqrt(v)*dB\n"
	       "stratonovich dX = a*X*dt + b*X*dW\n"
	       "let Y = log(S)\n",
	       "(S_PARAM (COND mu) (COND sigma) (COND r) (COND kappa) (COND theta) (COND xi))\n"
	       "(S_PARAM (COND rho in (INTERVAL (NEG (NUM 1)) (NUM 1))))\n"
	       "(S_ASSUME (COND S > (NUM 0)) (COND v > (NUM 0)))\n"
	       "(S_NOISE (NAME W) (NAME B))\n"
	       "(S_CORR (NAME W) (NAME B) (NAME rho))\n"
	       "(S_FUNC f (NAME t) (NAME x))\n"
	       "(S_SDE dS (ADD (MUL (MUL (NAME mu) (NAME S)) (NAME dt)) "
	       "(MUL (MUL (CALL sqrt (NAME v)) (NAME S)) (NAME dW))))\n"
	       "(S_SDE dv (ADD (MUL (MUL (NAME kappa) (SUB (NAME theta) (NAME v))) (NAME dt)) "
	       "(MUL (MUL (NAME xi) (CALL sqrt (NAME v))) (NAME dB))))\n"
	       "(S_STRAT_SDE dX (ADD (MUL (MUL (NAME a) (NAME X)) (NAME dt)) "
	       "(MUL (MUL (NAME b) (NAME X)) (NAME dW))))\n"
	       "(S_LET Y (CALL log (NAME S)))");
}
END_TEST

START_TEST(test_param_bound_shared)
{
	ast_list list;

	ast_parse("param a, b >= 1", 15, DEPTH, &list);
	ck_assert(!list.error.present);
	ck_assert_uint_eq(list.n, 1);
	ck_assert_uint_eq(list.stmts[0]->nitems, 2);
	ck_assert_int_eq(list.stmts[0]->items[0]->op, REL_GE);
	ck_assert_int_eq(list.stmts[0]->items[1]->op, REL_GE);
	ck_assert_ptr_eq(list.stmts[0]->items[0]->a, list.stmts[0]->items[1]->a);
	ast_list_free(&list);
}
END_TEST

/* assume: a single name on the left is a range on it (COND); any other
 * left side is a relation between two expressions (RELATION). */
START_TEST(test_assume_relations)
{
	PARSES("assume T > t", "(S_ASSUME (COND T > (NAME t)))");
	PARSES("assume 2*kappa*theta > xi^2",
	       "(S_ASSUME (RELATION > (MUL (MUL (NUM 2) (NAME kappa)) (NAME theta)) "
	       "(POW (NAME xi) (NUM 2))))");
	PARSES("assume U - L >= 1, x > 0, a*b <= c",
	       "(S_ASSUME (RELATION >= (SUB (NAME U) (NAME L)) (NUM 1)) (COND x > (NUM 0)) "
	       "(RELATION <= (MUL (NAME a) (NAME b)) (NAME c)))");
	/* a number on the left and a name on the right: the range on the name */
	PARSES("assume 0 < x, -1 <= y", "(S_ASSUME (COND x > (NUM 0)) (COND y >= (NEG (NUM 1))))");
	PARSES("assume 0 < x + y", "(S_ASSUME (RELATION < (NUM 0) (ADD (NAME x) (NAME y))))");
	PARSES("assume log(a) in [0, 1]",
	       "(S_ASSUME (RELATION in (CALL log (NAME a)) (INTERVAL (NUM 0) (NUM 1))))");
	PARSES("assume (x) < 1", "(S_ASSUME (COND x < (NUM 1)))");
	/* a relation continues over a line break after its operator */
	PARSES("assume 2*k*m >\n s^2",
	       "(S_ASSUME (RELATION > (MUL (MUL (NUM 2) (NAME k)) (NAME m)) (POW (NAME s) (NUM 2))))");
	/* param still takes names only */
	PARSES("param 2*a > 0", "ERROR 1:7: unexpected number '2'; expected a name");
	PARSES("assume a + b", "ERROR 1:13 incomplete: unexpected end of input; expected an "
	       "operator, '<', '>', '<=', '>=', '(' or 'in'");
	PARSES("assume a > b > c", "ERROR 1:14: unexpected '>'; expected an operator, ',', '(' or "
	       "end of statement");
}
END_TEST

START_TEST(test_relation_positions)
{
	const char *source = "assume x > 0, 2*k > s^2";
	ast_list list;

	ast_parse(source, strlen(source), DEPTH, &list);
	ck_assert(!list.error.present);
	ck_assert_uint_eq(list.n, 1);
	ck_assert_uint_eq(list.stmts[0]->nitems, 2);
	const ast_node *relation = list.stmts[0]->items[1];
	ck_assert_int_eq(relation->kind, AST_RELATION);
	ck_assert_int_eq(relation->op, REL_GT);
	ck_assert_int_eq(relation->loc.first_column, 15);
	ck_assert_int_eq(relation->loc.last_column, 23);
	ck_assert_int_eq(relation->a->kind, AST_MUL);
	ck_assert_int_eq(relation->b->kind, AST_POW);
	ck_assert_int_eq(relation->b->loc.first_column, 21);
	ast_list_free(&list);
}
END_TEST

/* --------------------------------------------------------------- queries */

START_TEST(test_queries)
{
	PARSES("log(exp(x))", "(S_EXPR (CALL log (CALL exp (NAME x))))");
	PARSES("d log(S)", "(S_D (CALL log (NAME S)))");
	PARSES("d 1/S", "(S_D (DIV (NUM 1) (NAME S)))");
	PARSES("d W^2", "(S_D (POW (NAME W) (NUM 2)))");
	PARSES("drift log(S)", "(S_DRIFT (CALL log (NAME S)))");
	PARSES("diffusion S*v", "(S_DIFFUSION (MUL (NAME S) (NAME v)))");
	PARSES("generator f(t, S)", "(S_GENERATOR (CALL f (NAME t) (NAME S)))");
	PARSES("qv S", "(S_QV (NAME S))");
	PARSES("qv S, v", "(S_QV (NAME S) (NAME v))");
	PARSES("pde V(t, S)", "(S_PDE V (NAME t) (NAME S))");
	PARSES("pde V(t, S) discount r", "(S_PDE V (NAME t) (NAME S) (discount (NAME r)))");
	PARSES("pde V(t, S, v) discount r0 + x",
	       "(S_PDE V (NAME t) (NAME S) (NAME v) (discount (ADD (NAME r0) (NAME x))))");
	PARSES("sde X", "(S_SDE_ITO X)");
	PARSES("sde X stratonovich", "(S_SDE_STRAT X)");
	/* a query word directly before '(' is a function inside an expression */
	PARSES("drift(P)/P", "(S_EXPR (DIV (QUERY drift (NAME P)) (NAME P)))");
	PARSES("drift (P)/P", "(S_DRIFT (DIV (NAME P) (NAME P)))");
	PARSES("let D = drift(P)", "(S_LET D (QUERY drift (NAME P)))");
	PARSES("diffusion(P, W)*2", "(S_EXPR (MUL (QUERY diffusion (NAME P) (NAME W)) (NUM 2)))");
	PARSES("qv(S, v) - qv(S)", "(S_EXPR (SUB (QUERY qv (NAME S) (NAME v)) (QUERY qv (NAME S))))");
	PARSES("claim generator(C) - r*C = 0",
	       "(S_CLAIM (SUB (QUERY generator (NAME C)) (MUL (NAME r) (NAME C))) (NUM 0))");
	PARSES("claim generator C - r*C = 0",
	       "(S_CLAIM (S_GENERATOR (SUB (NAME C) (MUL (NAME r) (NAME C)))) (NUM 0))");
	PARSES("drift(S)/S under Q", "(S_UNDER Q (S_EXPR (DIV (QUERY drift (NAME S)) (NAME S))))");
	PARSES("drifty(S)", "(S_EXPR (CALL drifty (NAME S)))");
	PARSES("forward p(t, x, y)", "(S_FORWARD p (NAME t) (NAME x) (NAME y))");
	PARSES("coefficients (drift(P) - r*P)/P in r, y",
	       "(S_COEFFICIENTS (DIV (SUB (QUERY drift (NAME P)) (MUL (NAME r) (NAME P))) (NAME P)) "
	       "(NAME r) (NAME y))");
	PARSES("moments v, 3", "(S_MOMENTS v (NUM 3))");
	PARSES("moments v, 2 under Q", "(S_UNDER Q (S_MOMENTS v (NUM 2)))");
}
END_TEST

START_TEST(test_claims)
{
	PARSES("claim d log(S) = (mu - sigma^2/2)*dt + sigma*dW",
	       "(S_CLAIM (S_D (CALL log (NAME S))) (ADD (MUL (SUB (NAME mu) "
	       "(DIV (POW (NAME sigma) (NUM 2)) (NUM 2))) (NAME dt)) (MUL (NAME sigma) (NAME dW))))");
	PARSES("claim d S1*S2 = S1*dS2 + S2*dS1 + dS1*dS2",
	       "(S_CLAIM (S_D (MUL (NAME S1) (NAME S2))) (ADD (ADD (MUL (NAME S1) (NAME dS2)) "
	       "(MUL (NAME S2) (NAME dS1))) (MUL (NAME dS1) (NAME dS2))))");
	PARSES("claim log(exp(x)) = x", "(S_CLAIM (CALL log (CALL exp (NAME x))) (NAME x))");
	PARSES("claim drift S = mu*S", "(S_CLAIM (S_DRIFT (NAME S)) (MUL (NAME mu) (NAME S)))");
	PARSES("claim diffusion S = s", "(S_CLAIM (S_DIFFUSION (NAME S)) (NAME s))");
	PARSES("claim generator S = m", "(S_CLAIM (S_GENERATOR (NAME S)) (NAME m))");
	PARSES("claim qv S = v", "(S_CLAIM (S_QV (NAME S)) (NAME v))");
	PARSES("claim qv S, v = rho", "(S_CLAIM (S_QV (NAME S) (NAME v)) (NAME rho))");
	PARSES("claim d(S)*d(S) = v*dt",
	       "(S_CLAIM (MUL (DIFF (NAME S)) (DIFF (NAME S))) (MUL (NAME v) (NAME dt)))");
}
END_TEST

START_TEST(test_checks)
{
	PARSES("check d log(S) at S=100, mu=0.05",
	       "(S_CHECK d (CALL log (NAME S)) (at (ASSIGN S (NUM 100)) (ASSIGN mu (NUM 0.05))))");
	PARSES("check log(S) at S=1", "(S_CHECK (CALL log (NAME S)) (at (ASSIGN S (NUM 1))))");
	PARSES("check d S^2 = 2*S*dS + v*dt at S=100 over T=1, steps=1000, paths=20000, "
	       "seed=7, scheme=milstein verbose",
	       "(S_CHECK d (POW (NAME S) (NUM 2)) (ADD (MUL (MUL (NUM 2) (NAME S)) (NAME dS)) "
	       "(MUL (NAME v) (NAME dt))) (at (ASSIGN S (NUM 100))) (over (ASSIGN T (NUM 1)) "
	       "(ASSIGN steps (NUM 1000)) (ASSIGN paths (NUM 20000)) (ASSIGN seed (NUM 7)) "
	       "(ASSIGN scheme (NAME milstein))) verbose)");
	PARSES("check d S at S=1 verbose", "(S_CHECK d (NAME S) (at (ASSIGN S (NUM 1))) verbose)");
	/* the operator form means the same as the keyword form */
	PARSES("check d(S^2) at S=1", "(S_CHECK d (POW (NAME S) (NUM 2)) (at (ASSIGN S (NUM 1))))");
	/* concrete forms for generic functions, before or after over */
	PARSES("check d log(S) at S=1 where sigma(t, S) = 0.2 + t, g(x) = x",
	       "(S_CHECK d (CALL log (NAME S)) (at (ASSIGN S (NUM 1))) (where (CONCRETE sigma "
	       "(ADD (NUM 0.2) (NAME t)) (NAME t) (NAME S)) (CONCRETE g (NAME x) (NAME x))))");
	PARSES("check d S at S=1 over T=2 where g(x) = x verbose",
	       "(S_CHECK d (NAME S) (at (ASSIGN S (NUM 1))) (over (ASSIGN T (NUM 2))) "
	       "(where (CONCRETE g (NAME x) (NAME x))) verbose)");
	PARSES("check d S at S=1 where g(x) = x over T=2",
	       "(S_CHECK d (NAME S) (at (ASSIGN S (NUM 1))) (over (ASSIGN T (NUM 2))) "
	       "(where (CONCRETE g (NAME x) (NAME x))))");
}
END_TEST

START_TEST(test_check_fields)
{
	const char *source = "check d x = y at x=1, y=2 over T=1 verbose";
	ast_list list;

	ast_parse(source, strlen(source), DEPTH, &list);
	ck_assert(!list.error.present);
	ck_assert_uint_eq(list.n, 1);
	const ast_node *node = list.stmts[0];
	ck_assert_int_eq(node->kind, AST_S_CHECK);
	ck_assert(node->with_d);
	ck_assert(node->verbose);
	ck_assert_str_eq(node->a->text, "x");
	ck_assert_str_eq(node->b->text, "y");
	ck_assert_uint_eq(node->nitems, 2);
	ck_assert_uint_eq(node->nextra, 1);
	ck_assert_str_eq(node->extra[0]->text, "T");
	ast_list_free(&list);
}
END_TEST

START_TEST(test_under)
{
	static const char *const queries[] = {
		"x*y", "d S", "drift S", "diffusion S", "generator S", "qv S", "qv S, v",
		"pde V(t, S) discount r", "sde S", "sde S stratonovich", "claim d S = dS",
		"check d S at S=1",
	};
	static const char *const kinds[] = {
		"S_EXPR", "S_D", "S_DRIFT", "S_DIFFUSION", "S_GENERATOR", "S_QV", "S_QV",
		"S_PDE", "S_SDE_ITO", "S_SDE_STRAT", "S_CLAIM", "S_CHECK",
	};

	for (size_t i = 0; i < sizeof queries / sizeof queries[0]; i++) {
		char source[128], prefix[64];
		char *got;

		snprintf(source, sizeof source, "%s under Q", queries[i]);
		snprintf(prefix, sizeof prefix, "(S_UNDER Q (%s ", kinds[i]);
		got = parse(source);
		ck_assert_msg(strncmp(got, prefix, strlen(prefix)) == 0, "%s gave %s", source, got);
		ck_assert(strchr(got, '\n') == NULL);
		free(got);
	}
	PARSES("d 1/S under Q", "(S_UNDER Q (S_D (DIV (NUM 1) (NAME S))))");
	/* declarations take no measure, except let, whose queries it applies to */
	PARSES("dS = mu*dt under Q",
	       "ERROR 1:12: unexpected 'under'; expected an operator, '(' or end of statement");
	PARSES("let Y = 2 under Q", "(S_UNDER Q (S_LET Y (NUM 2)))");
	PARSES("func f(t) under Q", "ERROR 1:11: unexpected 'under'; expected end of statement");
}
END_TEST

/* --------------------------------------------------------------- session */

START_TEST(test_session_commands)
{
	PARSES("show; show S; quit", "(S_SHOW)\n(S_SHOW S)\n(S_QUIT)");
	PARSES("format text; format latex; format c; format json",
	       "(S_FORMAT text)\n(S_FORMAT latex)\n(S_FORMAT c)\n(S_FORMAT json)");
	PARSES("help\nhelp claim\nhelp d\nhelp help; help under",
	       "(S_HELP)\n(S_HELP claim)\n(S_HELP d)\n(S_HELP help)\n(S_HELP under)");
	PARSES("help # a comment\nquit", "(S_HELP)\n(S_QUIT)");
	PARSES("save model.itox\nload /tmp/a-b/c.itox # comment",
	       "(S_SAVE model.itox)\n(S_LOAD /tmp/a-b/c.itox)");
	PARSES("save \"my model.itox\"; load \"q\\\"x\\\\y\"",
	       "(S_SAVE \"my model.itox\")\n(S_LOAD \"q\\\"x\\\\y\")");
	PARSES("load param;quit", "(S_LOAD param)\n(S_QUIT)");
	PARSES("forget sigma; forget Q", "(S_FORGET sigma)\n(S_FORGET Q)");
}
END_TEST

START_TEST(test_path_text)
{
	const char *source = "save \"a b\\\"c\"";
	ast_list list;

	ast_parse(source, strlen(source), DEPTH, &list);
	ck_assert(!list.error.present);
	ck_assert_uint_eq(list.n, 1);
	ck_assert_str_eq(list.stmts[0]->text, "a b\"c");
	ast_list_free(&list);
}
END_TEST

/* -------------------------------------------------------- lexical rules */

START_TEST(test_separators_and_blank_input)
{
	PARSES("", "");
	PARSES("   \n\n\t\n", "");
	PARSES("# only a comment", "");
	PARSES("# one\n  # two\n", "");
	PARSES(";;\n;", "");
	PARSES("a; b\nc", "(S_EXPR (NAME a))\n(S_EXPR (NAME b))\n(S_EXPR (NAME c))");
	PARSES("a;;\n\n;b;", "(S_EXPR (NAME a))\n(S_EXPR (NAME b))");
	PARSES("a\r\nb\r\n", "(S_EXPR (NAME a))\n(S_EXPR (NAME b))");

	ast_list list;
	ast_parse(NULL, 0, DEPTH, &list);
	ck_assert_uint_eq(list.n, 0);
	ck_assert(!list.error.present);
	ast_list_free(&list);
}
END_TEST

START_TEST(test_continuation_lines)
{
	PARSES("a +\nb", "(S_EXPR (ADD (NAME a) (NAME b)))");
	PARSES("a + # note\n  b", "(S_EXPR (ADD (NAME a) (NAME b)))");
	PARSES("a \\\n+ b", "(S_EXPR (ADD (NAME a) (NAME b)))");
	PARSES("a \\  \n+ b", "(S_EXPR (ADD (NAME a) (NAME b)))");
	PARSES("f(a,\nb\n)", "(S_EXPR (CALL f (NAME a) (NAME b)))");
	PARSES("(a\n+ b)\nc", "(S_EXPR (ADD (NAME a) (NAME b)))\n(S_EXPR (NAME c))");
	PARSES("param rho in [\n-1,\n1]", "(S_PARAM (COND rho in (INTERVAL (NEG (NUM 1)) (NUM 1))))");
	PARSES("dS =\n  mu*S*dt", "(S_SDE dS (MUL (MUL (NAME mu) (NAME S)) (NAME dt)))");
	PARSES("param a,\n b", "(S_PARAM (COND a) (COND b))");
	PARSES("measure Q:\n dW = dZ", "(S_MEASURE Q (ASSIGN dW (NAME dZ)))");
	PARSES("assume x >\n 0; assume y <=\n 1",
	       "(S_ASSUME (COND x > (NUM 0)))\n(S_ASSUME (COND y <= (NUM 1)))");
	/* a newline after an operand ends the statement */
	PARSES("a\n+ b", "(S_EXPR (NAME a))\n(S_EXPR (NAME b))");
}
END_TEST

START_TEST(test_keywords)
{
	size_t count = 0;

	for (const char *const *word = ast_keywords; *word != NULL; word++) {
		char source[64];
		char *got;

		snprintf(source, sizeof source, "let %s = 1", *word);
		got = parse(source);
		ck_assert_msg(strncmp(got, "ERROR 1:5: unexpected '", 23) == 0, "%s: %s", source, got);
		ck_assert_msg(strstr(got, "(a reserved word); expected a name") != NULL, "%s: %s",
			      source, got);
		free(got);
		count++;
	}
	ck_assert_uint_eq(count, 36); /* with forget, coefficients, forward, moments */
	ck_assert_str_eq(ast_keywords[0], "param");
	ck_assert_str_eq(ast_keywords[count - 1], "d");
	ck_assert_str_eq(ast_kind_name(AST_NUM), "NUM");
	ck_assert_str_eq(ast_kind_name(AST_S_CLAIM), "S_CLAIM");
	ck_assert_str_eq(ast_kind_name(AST_S_QUIT), "S_QUIT");
	ck_assert_str_eq(ast_kind_name(AST_KIND_COUNT), "?");
}
END_TEST

/* ------------------------------------------------------------- positions */

START_TEST(test_node_positions)
{
	const char *source = "x = 1 +\n  foo(a, bb)\n  d(S)";
	ast_list list;

	ast_parse(source, strlen(source), DEPTH, &list);
	ck_assert(!list.error.present);
	ck_assert_uint_eq(list.n, 2);
	const ast_node *sde = list.stmts[0];
	ck_assert_int_eq(sde->loc.first_line, 1);
	ck_assert_int_eq(sde->loc.first_column, 1);
	ck_assert_int_eq(sde->loc.last_line, 2);
	ck_assert_int_eq(sde->loc.last_column, 12);
	const ast_node *sum = sde->a;
	ck_assert_int_eq(sum->kind, AST_ADD);
	ck_assert_int_eq(sum->loc.first_line, 1);
	ck_assert_int_eq(sum->loc.first_column, 5);
	const ast_node *call = sum->b;
	ck_assert_int_eq(call->kind, AST_CALL);
	ck_assert_int_eq(call->loc.first_line, 2);
	ck_assert_int_eq(call->loc.first_column, 3);
	ck_assert_int_eq(call->loc.last_column, 12);
	const ast_node *bb = call->items[1];
	ck_assert_str_eq(bb->text, "bb");
	ck_assert_int_eq(bb->loc.first_line, 2);
	ck_assert_int_eq(bb->loc.first_column, 10);
	ck_assert_int_eq(bb->loc.last_column, 11);
	const ast_node *diff = list.stmts[1]->a;
	ck_assert_int_eq(diff->kind, AST_DIFF);
	ck_assert_int_eq(diff->loc.first_line, 3);
	ck_assert_int_eq(diff->loc.first_column, 3);
	ck_assert_int_eq(diff->loc.last_column, 6);
	ast_list_free(&list);
}
END_TEST

START_TEST(test_positions_across_continuations)
{
	const char *source = "a \\\n + b\n(c +\n e)";
	ast_list list;

	ast_parse(source, strlen(source), DEPTH, &list);
	ck_assert(!list.error.present);
	ck_assert_uint_eq(list.n, 2);
	ck_assert_int_eq(list.stmts[0]->a->b->loc.first_line, 2);
	ck_assert_int_eq(list.stmts[0]->a->b->loc.first_column, 4);
	ck_assert_int_eq(list.stmts[1]->loc.first_line, 3);
	ck_assert_int_eq(list.stmts[1]->loc.last_line, 4);
	ck_assert_int_eq(list.stmts[1]->a->b->loc.first_line, 4);
	ck_assert_int_eq(list.stmts[1]->a->b->loc.first_column, 2);
	ast_list_free(&list);
}
END_TEST

/* ---------------------------------------------------------------- errors */

START_TEST(test_unexpected_token)
{
	PARSES("a * * b", "ERROR 1:5: unexpected '*'; expected an expression");
	PARSES("a b", "ERROR 1:3: unexpected name 'b'; expected an operator, '=', '(', 'under' "
		      "or end of statement");
	PARSES("2x", "ERROR 1:2: unexpected name 'x'; expected an operator, 'under' or end of statement");
	PARSES(")", "ERROR 1:1: unexpected ')'; expected a statement");
	PARSES("param 1", "ERROR 1:7: unexpected number '1'; expected a name");
	PARSES("f(a,)", "ERROR 1:5: unexpected ')'; expected an expression");
	PARSES("corr(W) = 1", "ERROR 1:7: unexpected ')'; expected ','");
	PARSES("measure Q dW = 1", "ERROR 1:11: unexpected name 'dW'; expected ':'");
	PARSES("f(a]", "ERROR 1:4: unexpected ']'; expected an operator, ',', '(' or ')'");
	PARSES("param\nmu", "ERROR 1:6: unexpected end of line; expected a name");
	PARSES("a + d x", "ERROR 1:5: unexpected 'd' (a reserved word); expected an expression");
	/* the statements before the error stay */
	PARSES("a; b\nc +* e", "(S_EXPR (NAME a))\n(S_EXPR (NAME b))\n"
			       "ERROR 2:4: unexpected '*'; expected an expression");
}
END_TEST

START_TEST(test_bad_characters)
{
	PARSES("a @ b", "ERROR 1:3: unexpected character '@'");
	PARSES("x = 1\ny $ 2", "(S_SDE x (NUM 1))\nERROR 2:3: unexpected character '$'");
	PARSES("a \\ b", "ERROR 1:3: unexpected character '\\'");
	PARSES("12.", "ERROR 1:3: unexpected character '.'");
	PARSES("\xcf\x83 + 1", "ERROR 1:1: unexpected character '\xcf\x83'");
	PARSES("a\x01", "ERROR 1:2: unexpected character (byte 0x01)");
	PARSES("a + \xff", "ERROR 1:5: unexpected character (byte 0xFF)");
	PARSES("save \"abc", "ERROR 1:6: unterminated string (a closing '\"' is missing)");

	char *got = parse_text("a +\0b", 5, DEPTH);
	ck_assert_str_eq(got, "ERROR 1:4: unexpected character (byte 0x00)");
	free(got);
}
END_TEST

START_TEST(test_unclosed_parenthesis)
{
	PARSES("(a", "ERROR 1:1 incomplete: unclosed '('");
	PARSES("f((a)", "ERROR 1:2 incomplete: unclosed '('");
	PARSES("x = 1\ny = g(a,\n  b", "(S_SDE x (NUM 1))\nERROR 2:6 incomplete: unclosed '('");
	PARSES("param rho in [-1,", "ERROR 1:14 incomplete: unclosed '['");
	PARSES("(a))", "ERROR 1:4: unexpected ')'; expected an operator, 'under' or end of statement");
}
END_TEST

START_TEST(test_incomplete_input)
{
	PARSES("a +", "ERROR 1:4 incomplete: unexpected end of input; expected an expression");
	PARSES("a +\n", "ERROR 2:1 incomplete: unexpected end of input; expected an expression");
	PARSES("x^", "ERROR 1:3 incomplete: unexpected end of input; expected an expression");
	PARSES("param", "ERROR 1:6 incomplete: unexpected end of input; expected a name");
	PARSES("noise W,", "ERROR 1:9 incomplete: unexpected end of input; expected a name");
	PARSES("check x", "ERROR 1:8 incomplete: unexpected end of input; expected an operator, "
			  "'=', '(' or 'at'");
	PARSES("check x at S=", "ERROR 1:14 incomplete: unexpected end of input; expected an expression");
	PARSES("save", "ERROR 1:5 incomplete: unexpected end of input; expected a file name");
	PARSES("d", "ERROR 1:2 incomplete: unexpected end of input; expected an expression");
	PARSES("state x = log(S) where",
	       "ERROR 1:23 incomplete: unexpected end of input; expected a name");
	/* a complete statement followed by the end is not incomplete */
	PARSES("a + b", "(S_EXPR (ADD (NAME a) (NAME b)))");
	/* the REPL appends the next line and parses again */
	PARSES("a +\nb", "(S_EXPR (ADD (NAME a) (NAME b)))");
	PARSES("(a\n+ b)", "(S_EXPR (ADD (NAME a) (NAME b)))");
}
END_TEST

START_TEST(test_nesting_limit)
{
	PARSES("((((((x))))))", "(S_EXPR (NAME x))");

	char *got = parse_text("-----x", 6, 5);
	ck_assert_str_eq(got, "(S_EXPR (NEG (NEG (NEG (NEG (NEG (NAME x)))))))");
	free(got);
	got = parse_text("------x", 7, 5);
	ck_assert_str_eq(got, "ERROR 1:6: expression nested too deeply (limit 5)");
	free(got);
	got = parse_text("f(f(f(f(f(f(x))))))", 19, 5);
	ck_assert_str_eq(got, "ERROR 1:12: expression nested too deeply (limit 5)");
	free(got);
	got = parse_text("x^x^x^x^x^x^x", 13, 5);
	ck_assert_str_eq(got, "ERROR 1:12: expression nested too deeply (limit 5)");
	free(got);
	/* a long chain a+b+c... is not nesting (the engine folds it in a loop) */
	got = parse_text("a; b+b+b+b+b+b+b", 16, 5);
	ck_assert_str_eq(got, "(S_EXPR (NAME a))\n(S_EXPR (ADD (ADD (ADD (ADD (ADD (ADD (NAME b) (NAME b)) (NAME b)) (NAME b)) (NAME b)) (NAME b)) (NAME b)))");
	free(got);
	/* but what hangs off a chain still counts */
	got = parse_text("b+(((((b)))))", 13, 3);
	ck_assert_str_eq(got, "ERROR 1:6: expression nested too deeply (limit 3)");
	free(got);
	/* a limit below 1 means the default */
	got = parse_text("((((((((((x))))))))))", 21, 0);
	ck_assert_str_eq(got, "(S_EXPR (NAME x))");
	free(got);
}
END_TEST

START_TEST(test_deep_input_is_refused_promptly)
{
	size_t n = 100000;
	char *source = malloc(2 * n + 2);

	ck_assert_ptr_nonnull(source);
	memset(source, '(', n);
	char *got = parse_text(source, n, 200);
	ck_assert_str_eq(got, "ERROR 1:201: expression nested too deeply (limit 200)");
	free(got);

	memset(source, '-', n);
	source[n] = 'x';
	got = parse_text(source, n + 1, 200);
	ck_assert_str_eq(got, "ERROR 1:201: expression nested too deeply (limit 200)");
	free(got);

	/* a sum of 100,001 terms is one statement, not a nesting error */
	for (size_t i = 0; i < n; i++) {
		source[2 * i] = 'a';
		source[2 * i + 1] = '+';
	}
	source[2 * n] = 'a';
	ast_list list;
	ast_parse(source, 2 * n + 1, 200, &list);
	ck_assert(!list.error.present);
	ck_assert_uint_eq(list.n, 1);
	ast_list_free(&list);

	/* limits far above what recursion can bear are lowered */
	memset(source, '(', n);
	got = parse_text(source, n, 1 << 30);
	ck_assert_str_eq(got, "ERROR 1:10001: expression nested too deeply (limit 10000)");
	free(got);
	free(source);
}
END_TEST

START_TEST(test_sexpr_and_free)
{
	char *text = ast_to_sexpr(NULL);
	ast_list list;

	ck_assert_str_eq(text, "nil");
	free(text);
	ast_parse("a +", 3, DEPTH, &list);
	ck_assert(list.error.present);
	ast_list_free(&list);
	ck_assert_uint_eq(list.n, 0);
	ck_assert_ptr_null(list.all);
	ast_list_free(&list);	/* a freed list may be freed again */
}
END_TEST

Suite *grammar_suite(void)
{
	Suite *suite = suite_create("grammar");
	TCase *forms = tcase_create("forms");
	TCase *lexical = tcase_create("lexical");
	TCase *errors = tcase_create("errors");

	tcase_add_test(forms, test_precedence);
	tcase_add_test(forms, test_numbers_and_names);
	tcase_add_test(forms, test_calls_partial_diff);
	tcase_add_test(forms, test_declarations);
	tcase_add_test(forms, test_language_example);
	tcase_add_test(forms, test_param_bound_shared);
	tcase_add_test(forms, test_assume_relations);
	tcase_add_test(forms, test_relation_positions);
	tcase_add_test(forms, test_queries);
	tcase_add_test(forms, test_claims);
	tcase_add_test(forms, test_checks);
	tcase_add_test(forms, test_check_fields);
	tcase_add_test(forms, test_under);
	tcase_add_test(forms, test_session_commands);
	tcase_add_test(forms, test_path_text);
	suite_add_tcase(suite, forms);

	tcase_add_test(lexical, test_separators_and_blank_input);
	tcase_add_test(lexical, test_continuation_lines);
	tcase_add_test(lexical, test_keywords);
	tcase_add_test(lexical, test_node_positions);
	tcase_add_test(lexical, test_positions_across_continuations);
	suite_add_tcase(suite, lexical);

	tcase_add_test(errors, test_unexpected_token);
	tcase_add_test(errors, test_bad_characters);
	tcase_add_test(errors, test_unclosed_parenthesis);
	tcase_add_test(errors, test_incomplete_input);
	tcase_add_test(errors, test_nesting_limit);
	tcase_add_test(errors, test_deep_input_is_refused_promptly);
	tcase_add_test(errors, test_sexpr_and_free);
	suite_add_tcase(suite, errors);
	return suite;
}
