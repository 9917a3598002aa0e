/* check_props.c - property tests of the canonical form on generated
 * expressions (a fixed seed, so every run checks the same cases).
 *
 * A small generator makes random expression trees over the symbols of a
 * model (parameters a, b, c, a positive state S, a noise W and the time t)
 * with + - * / ^ (small integer and half-integer exponents) and the built-in
 * functions.  For every tree:
 *   (a) building it with the operands commuted and re-associated gives the
 *       same node (commutativity and associativity of + and *);
 *   (b) e - e is the node 0 and e + e is the node 2*e;
 *   (c) the text of the tree, read by the session's parser, is the node the
 *       constructors built, and the printed text of that node reads back to
 *       the identical node (LANGUAGE.md: every printed expression must parse
 *       back to the same expression);
 *   (d) eval_at of the node agrees with this file's own double evaluation of
 *       the tree, within a relative 1e-9 of the magnitude of its terms
 *       (DESIGN.md, "Numbers": a relative tolerance scaled by the magnitude of
 *       the terms), wherever the direct value is finite;
 *   (e) the node order is antisymmetric and transitive on the generated nodes.
 * The identities are the field axioms of the reals (common practice, no
 * source); the numbers come from the C library, not from the engine. */

#define _GNU_SOURCE /* open_memstream */
#include <check.h>
#include <math.h>
#include <stdarg.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "check_suites.h"
#include "eval.h"
#include "expr.h"
#include "print.h"
#include "session.h"

/* ------------------------------------------------------------------ random numbers */

/* splitmix64 (Steele, Lea, Flood, "Fast splittable pseudorandom number
 * generators", OOPSLA 2014, from memory): enough for test-case generation. */
static uint64_t rng_state;

static uint64_t rng_next(void)
{
	uint64_t z = (rng_state += 0x9e3779b97f4a7c15ULL);
	z = (z ^ (z >> 30)) * 0xbf58476d1ce4e5b9ULL;
	z = (z ^ (z >> 27)) * 0x94d049bb133111ebULL;
	return z ^ (z >> 31);
}

static unsigned rng_below(unsigned n)
{
	return (unsigned)(rng_next() % n);
}

static double rng_uniform(double lo, double hi)
{
	return lo + (hi - lo) * ((double)(rng_next() >> 11) / 9007199254740992.0);
}

/* ------------------------------------------------------------------ generated trees */

typedef enum { G_SYM, G_NUM, G_ADD, G_MUL, G_SUB, G_DIV, G_POW, G_FUN } gkind;

typedef struct gnode {
	gkind kind;
	int sym;	 /* G_SYM: index into sym_names */
	long num, den;	 /* G_NUM value; G_POW exponent */
	expr_builtin fn; /* G_FUN (EXPR_F_COUNT means sqrt) */
	int nkids;
	struct gnode *kids[3];
} gnode;

#define SQRT_FN EXPR_F_COUNT
static const char *sym_names[] = {"a", "b", "c", "S", "W", "t"};
#define NSYMS 6

static gnode pool[256];
static size_t pool_used;

static gnode *gnew(gkind kind)
{
	ck_assert_uint_lt(pool_used, sizeof pool / sizeof *pool);
	gnode *g = &pool[pool_used++];
	memset(g, 0, sizeof *g);
	g->kind = kind;
	return g;
}

static const long exponents[][2] = {{2, 1}, {3, 1}, {-1, 1}, {-2, 1}, {1, 2}, {3, 2}, {-1, 2}};
static const expr_builtin functions[] = {EXPR_F_EXP,  EXPR_F_LOG,  EXPR_F_SIN,  EXPR_F_COS,
					 EXPR_F_NCDF, EXPR_F_NPDF, EXPR_F_TANH, EXPR_F_ERF,
					 EXPR_F_ABS,  EXPR_F_COSH, SQRT_FN,	   EXPR_F_EXP};

static gnode *generate(int depth)
{
	if (depth == 0 || rng_below(10) < 3) {
		if (rng_below(10) < 7) {
			gnode *g = gnew(G_SYM);
			g->sym = (int)rng_below(NSYMS);
			return g;
		}
		gnode *g = gnew(G_NUM);
		g->num = (long)rng_below(9) - 4;
		g->den = rng_below(3) == 0 ? 1 + (long)rng_below(4) : 1;
		return g;
	}
	unsigned pick = rng_below(16);
	gnode *g;
	if (pick < 4) {
		g = gnew(G_ADD);
		g->nkids = 2 + (int)rng_below(2);
	} else if (pick < 8) {
		g = gnew(G_MUL);
		g->nkids = 2 + (int)rng_below(2);
	} else if (pick < 10) {
		g = gnew(G_SUB);
		g->nkids = 2;
	} else if (pick < 12) {
		g = gnew(G_DIV);
		g->nkids = 2;
	} else if (pick < 14) {
		g = gnew(G_POW);
		g->nkids = 1;
		unsigned e = rng_below(sizeof exponents / sizeof *exponents);
		g->num = exponents[e][0];
		g->den = exponents[e][1];
	} else {
		g = gnew(G_FUN);
		g->nkids = 1;
		g->fn = functions[rng_below(sizeof functions / sizeof *functions)];
	}
	for (int i = 0; i < g->nkids; i++)
		g->kids[i] = generate(depth - 1);
	return g;
}

/* ------------------------------------------------------------------ text */

typedef struct text {
	char *data;
	size_t n, cap;
} text;

static void put(text *t, const char *s)
{
	size_t k = strlen(s);
	if (t->n + k + 1 > t->cap) {
		t->cap = 2 * (t->n + k + 1);
		t->data = realloc(t->data, t->cap);
		ck_assert_ptr_nonnull(t->data);
	}
	memcpy(t->data + t->n, s, k + 1);
	t->n += k;
}

/* Fully parenthesised text in the language of LANGUAGE.md. */
static void write_text(text *t, const gnode *g)
{
	char buf[64];
	static const char *ops[] = {[G_ADD] = " + ", [G_MUL] = "*", [G_SUB] = " - ", [G_DIV] = "/"};
	switch (g->kind) {
	case G_SYM:
		put(t, sym_names[g->sym]);
		return;
	case G_NUM:
		if (g->den == 1)
			snprintf(buf, sizeof buf, "(%ld)", g->num);
		else
			snprintf(buf, sizeof buf, "(%ld/%ld)", g->num, g->den);
		put(t, buf);
		return;
	case G_ADD:
	case G_MUL:
	case G_SUB:
	case G_DIV:
		put(t, "(");
		for (int i = 0; i < g->nkids; i++) {
			if (i > 0)
				put(t, ops[g->kind]);
			write_text(t, g->kids[i]);
		}
		put(t, ")");
		return;
	case G_POW:
		put(t, "(");
		write_text(t, g->kids[0]);
		snprintf(buf, sizeof buf, ")^(%ld/%ld)", g->num, g->den);
		put(t, buf);
		return;
	case G_FUN:
		put(t, g->fn == SQRT_FN ? "sqrt" : expr_builtin_name(g->fn));
		put(t, "(");
		write_text(t, g->kids[0]);
		put(t, ")");
		return;
	}
}

/* ------------------------------------------------------------------ building */

typedef struct builder {
	expr_ctx *ctx;
	const expr *syms[NSYMS];
	bool shuffle; /* commute and re-associate */
} builder;

static const expr *build(builder *b, const gnode *g);

/* The operands combined with op (expr_add or expr_mul): in the given order
 * as one n-ary call, or shuffled and combined by a random binary tree. */
static const expr *combine(builder *b, const expr **items, int n,
			   const expr *(*op)(expr_ctx *, const expr *, const expr *),
			   const expr *(*op_n)(expr_ctx *, size_t, const expr *const *))
{
	if (!b->shuffle)
		return op_n(b->ctx, (size_t)n, items);
	for (int i = n - 1; i > 0; i--) {
		int j = (int)rng_below((unsigned)i + 1);
		const expr *swap = items[i];
		items[i] = items[j];
		items[j] = swap;
	}
	while (n > 1) {
		int i = (int)rng_below((unsigned)n - 1); /* join items i and i+1 */
		items[i] = op(b->ctx, items[i], items[i + 1]);
		memmove(items + i + 1, items + i + 2, (size_t)(n - i - 2) * sizeof *items);
		n--;
	}
	return items[0];
}

static const expr *build(builder *b, const gnode *g)
{
	expr_ctx *ctx = b->ctx;
	const expr *kids[3];
	for (int i = 0; i < g->nkids; i++)
		kids[i] = build(b, g->kids[i]);
	switch (g->kind) {
	case G_SYM:
		return b->syms[g->sym];
	case G_NUM:
		return expr_rat(ctx, g->num, g->den);
	case G_ADD:
		return combine(b, kids, g->nkids, expr_add, expr_add_n);
	case G_MUL:
		return combine(b, kids, g->nkids, expr_mul, expr_mul_n);
	case G_SUB:
		/* u - v = (-v) + u */
		return b->shuffle ? expr_add(ctx, expr_neg(ctx, kids[1]), kids[0])
				  : expr_sub(ctx, kids[0], kids[1]);
	case G_DIV:
		/* u / v = v^-1 * u */
		return b->shuffle ? expr_mul(ctx, expr_pow(ctx, kids[1], expr_int(ctx, -1)), kids[0])
				  : expr_div(ctx, kids[0], kids[1]);
	case G_POW:
		return expr_pow_rat(ctx, kids[0], g->num, g->den);
	case G_FUN:
		if (g->fn == SQRT_FN)
			return expr_pow_rat(ctx, kids[0], 1, 2);
		return expr_fun(ctx, g->fn, kids[0]);
	}
	return NULL;
}

/* ------------------------------------------------------------------ direct evaluation */

static double Phi(double z) { return 0.5 * erfc(-z / sqrt(2.0)); }
static double phi(double z) { return exp(-0.5 * z * z) / sqrt(2.0 * M_PI); }

/* The value of the tree, and in *mag the magnitude of its terms: the value of
 * the same tree with every sum taken over absolute values, propagated through
 * functions by |f(u)| + |f'(u)| mag(u) (a first-order bound on what rounding
 * in any rearrangement of the terms can do; common practice, no source). */
static double direct(const gnode *g, const double *values, double *mag)
{
	double v[3], m[3];
	for (int i = 0; i < g->nkids; i++)
		v[i] = direct(g->kids[i], values, &m[i]);
	double r;
	switch (g->kind) {
	case G_SYM:
		r = values[g->sym];
		*mag = fabs(r);
		return r;
	case G_NUM:
		r = (double)g->num / (double)g->den;
		*mag = fabs(r);
		return r;
	case G_ADD:
	case G_SUB:
		r = v[0];
		*mag = m[0];
		for (int i = 1; i < g->nkids; i++) {
			r = g->kind == G_ADD ? r + v[i] : r - v[i];
			*mag += m[i];
		}
		return r;
	case G_MUL:
		r = v[0];
		*mag = m[0];
		for (int i = 1; i < g->nkids; i++) {
			r *= v[i];
			*mag *= m[i];
		}
		return r;
	case G_DIV:
		r = v[0] / v[1];
		*mag = m[0] / fabs(v[1]) + fabs(r) * m[1] / fabs(v[1]);
		return r;
	case G_POW: {
		double p = (double)g->num / (double)g->den;
		if (g->den == 1)
			r = pow(v[0], p);
		else
			r = pow(v[0], p); /* NaN for a negative base */
		if (g->num > 0 && g->den == 1)
			*mag = pow(m[0], p); /* a positive power of a sum is expanded */
		else
			*mag = fabs(r) * (1 + fabs(p) * m[0] / fabs(v[0]));
		return r;
	}
	case G_FUN: {
		double u = v[0], slope;
		switch ((int)g->fn) {
		case EXPR_F_EXP: r = exp(u); slope = r; break;
		case EXPR_F_LOG: r = log(u); slope = 1 / u; break;
		case EXPR_F_SIN: r = sin(u); slope = 1; break;
		case EXPR_F_COS: r = cos(u); slope = 1; break;
		case EXPR_F_NCDF: r = Phi(u); slope = phi(u); break;
		case EXPR_F_NPDF: r = phi(u); slope = fabs(u) * phi(u); break;
		case EXPR_F_TANH: r = tanh(u); slope = 1; break;
		case EXPR_F_ERF: r = erf(u); slope = 2 / sqrt(M_PI); break;
		case EXPR_F_ABS: r = fabs(u); slope = 1; break;
		case EXPR_F_COSH: r = cosh(u); slope = fabs(sinh(u)); break;
		case SQRT_FN: r = sqrt(u); slope = 0.5 / r; break;
		default: r = NAN; slope = NAN; break;
		}
		/* Phi and erf may be rewritten by symmetry (Phi(-x) = 1 - Phi(x)): their
		 * scale is that of 1 */
		double base = g->fn == EXPR_F_NCDF || g->fn == EXPR_F_ERF ? 1.0 : fabs(r);
		*mag = base + fabs(slope) * m[0];
		return r;
	}
	}
	*mag = NAN;
	return NAN;
}


/* ------------------------------------------------------------------ the properties */

#define NTREES 10000
#define DEPTH 3
#define SEED 20261201u

typedef struct counts {
	size_t checked, refused, nonfinite;
} counts;

/* Failures are collected, not fatal at once, so one run shows every property
 * that breaks (with the first examples of each); the test fails at the end. */
enum { P_A, P_B, P_C_PARSE, P_C_PRINT, P_D, P_REFUSE, NPROPS };
static const char *prop_names[NPROPS] = {"(a) commuted/re-associated", "(b) e-e, e+e",
					 "(c) parse = build", "(c) print round trip",
					 "(d) numeric agreement", "refusal"};
static size_t failures[NPROPS];
static char examples[NPROPS][3][700];

static void prop_fail(int prop, const char *format, ...) __attribute__((format(printf, 2, 3)));
static void prop_fail(int prop, const char *format, ...)
{
	if (failures[prop] < 3) {
		va_list args;
		va_start(args, format);
		vsnprintf(examples[prop][failures[prop]], sizeof examples[prop][0], format, args);
		va_end(args);
	}
	failures[prop]++;
}

#define PROP_CHECK(prop, cond, ...)                    \
	do {                                      \
		if (!(cond))                      \
			prop_fail(prop, __VA_ARGS__); \
	} while (0)

static session *sess;
static char *err_text;
static size_t err_size;
static FILE *err_stream, *out_stream;

static void open_session(void)
{
	out_stream = fopen("/dev/null", "w");
	err_stream = open_memstream(&err_text, &err_size);
	ck_assert_ptr_nonnull(out_stream);
	ck_assert_ptr_nonnull(err_stream);
	session_options options = {.out = out_stream, .err = err_stream, .format = FORMAT_TEXT, .seed = 1};
	sess = session_new(&options);
	const char *model = "param a, b, c\n"
			    "noise W\n"
			    "dS = a*S*dt + b*S*dW\n"
			    "assume S > 0\n";
	ck_assert_int_eq(session_run(sess, model, strlen(model), "props"), SESSION_OK);
}

static void close_session(void)
{
	session_free(sess);
	fclose(out_stream);
	fclose(err_stream);
	free(err_text);
}

/* The session's last diagnostics (for failure messages). */
static const char *session_errors(void)
{
	fflush(err_stream);
	if (!err_text)
		return "";
	return err_size > 400 ? err_text + err_size - 400 : err_text;
}

static void check_one(expr_ctx *ctx, const gnode *g, const char *source, counts *n,
		      const expr **keep)
{
	builder plain = {.ctx = ctx, .shuffle = false}, shuffled = {.ctx = ctx, .shuffle = true};
	for (int i = 0; i < NSYMS; i++)
		plain.syms[i] = shuffled.syms[i] = expr_sym(ctx, sym_names[i]);
	const expr *e = build(&plain, g);
	if (!e) {
		/* a division by an expression that is identically 0, such as 1/(a - a):
		 * the constructors refuse it, and so must the parser */
		PROP_CHECK(P_REFUSE, expr_error(ctx) == EXPR_ERR_DIVISION, "%s: %s", source,
		      expr_error_message(ctx));
		expr_clear_error(ctx);
		PROP_CHECK(P_REFUSE, session_expr(sess, source) == NULL, "%s: the parser accepted it", source);
		expr_clear_error(ctx);
		n->refused++;
		*keep = NULL;
		return;
	}
	*keep = e;

	/* (a) commuted and re-associated */
	const expr *other = build(&shuffled, g);
	PROP_CHECK(P_A, other == e, "%s: commuted/re-associated build differs", source);
	n->checked++;

	/* (b) e - e = 0, e + e = 2e */
	PROP_CHECK(P_B, expr_is_zero(expr_sub(ctx, e, e)), "%s: e - e is not 0", source);
	PROP_CHECK(P_B, expr_add(ctx, e, e) == expr_mul(ctx, expr_int(ctx, 2), e),
		      "%s: e + e is not 2*e", source);
	n->checked += 2;

	/* (c) parse the generated text; print and parse again */
	const expr *parsed = session_expr(sess, source);
	PROP_CHECK(P_C_PARSE, parsed == e, "%s: the parser gives another node (%s)", source,
		      session_errors());
	n->checked++;
	{
		char *printed = prn_expr(ctx, e, PRN_TEXT);
		ck_assert_ptr_nonnull(printed);
		const expr *back = session_expr(sess, printed);
		PROP_CHECK(P_C_PRINT, back == e, "%s printed as %s reads back as another node (%s)", source,
			      printed, session_errors());
		free(printed);
		n->checked++;
	}

	/* (d) numbers: S > 0 as assumed; the others of either sign */
	double values[NSYMS] = {rng_uniform(-2, 2), rng_uniform(-2, 2), rng_uniform(-2, 2),
				rng_uniform(0.2, 3), rng_uniform(-1.5, 1.5), rng_uniform(0, 2)};
	double mag = 0;
	double want = direct(g, values, &mag);
	if (!isfinite(want) || !isfinite(mag)) {
		n->nonfinite++;
		return;
	}
	bool ok = false;
	double got = eval_at(ctx, e, NSYMS, plain.syms, values, &ok);
	PROP_CHECK(P_D, ok, "%s: not evaluable", source);
	PROP_CHECK(P_D, fabs(got - want) <= 1e-9 * fmax(mag, 1e-300),
		      "%s at a=%.17g b=%.17g c=%.17g S=%.17g W=%.17g t=%.17g: engine %.17g, "
		      "direct %.17g (magnitude %.3g)",
		      source, values[0], values[1], values[2], values[3], values[4], values[5], got,
		      want, mag);
	n->checked++;
}

static int sign_of(int v)
{
	return (v > 0) - (v < 0);
}

START_TEST(test_generated)
{
	open_session();
	expr_ctx *ctx = session_expr_ctx(sess);
	rng_state = SEED;
	counts n = {0};
	const expr *recent[3] = {NULL, NULL, NULL};
	size_t order_checks = 0;
	for (int k = 0; k < NTREES; k++) {
		pool_used = 0;
		const gnode *g = generate(DEPTH);
		text source = {0};
		write_text(&source, g);
		const expr *e = NULL;
		check_one(ctx, g, source.data, &n, &e);
		free(source.data);
		if (!e)
			continue;
		/* (e) the order on the last three nodes */
		recent[0] = recent[1];
		recent[1] = recent[2];
		recent[2] = e;
		if (!recent[0])
			continue;
		for (int i = 0; i < 3; i++)
			for (int j = 0; j < 3; j++) {
				int ij = sign_of(expr_compare(recent[i], recent[j]));
				ck_assert(ij == -sign_of(expr_compare(recent[j], recent[i])));
				ck_assert((ij == 0) == (recent[i] == recent[j]));
			}
		int ab = expr_compare(recent[0], recent[1]), bc = expr_compare(recent[1], recent[2]);
		if (ab < 0 && bc < 0)
			ck_assert(expr_compare(recent[0], recent[2]) < 0);
		if (ab > 0 && bc > 0)
			ck_assert(expr_compare(recent[0], recent[2]) > 0);
		order_checks++;
	}
	fprintf(stderr,
		"props: %zu property checks on %d trees (+%zu order checks); %zu refused (division "
		"by 0), %zu not finite\n",
		n.checked, NTREES, order_checks, n.refused, n.nonfinite);
	ck_assert_uint_ge(n.checked, 10000);
	text report = {0};
	put(&report, "");
	for (int p = 0; p < NPROPS; p++) {
		if (!failures[p])
			continue;
		char line[128];
		snprintf(line, sizeof line, "\n%s: %zu failures, e.g.", prop_names[p], failures[p]);
		put(&report, line);
		for (size_t i = 0; i < failures[p] && i < 3; i++) {
			put(&report, "\n  ");
			put(&report, examples[p][i]);
		}
	}
	ck_assert_msg(report.n == 0, "properties failed:%s", report.data);
	free(report.data);
	close_session();
}
END_TEST

Suite *props_suite(void)
{
	Suite *suite = suite_create("props");
	TCase *tc = tcase_create("generated");
	tcase_set_timeout(tc, 60);
	tcase_add_test(tc, test_generated);
	suite_add_tcase(suite, tc);
	return suite;
}
