/* ball.h - certified evaluation of expressions in ball arithmetic (Arb).
 *
 * A value is a ball [m +/- r] that certainly contains the exact value of the
 * expression at the point.  Symbols and generic partials (EXPR_SYM, EXPR_FAPP)
 * are atoms: independent variables whose values the caller gives; or, for a
 * program compiled with a ball_generic, a generic application that is not
 * an atom is the value at its arguments of a fixed smooth function (below).
 *
 * Domains (the one convention of itox, stated in expr.h; the simplifier and the
 * double evaluator of eval.h apply it too):
 *   log x                  x > 0
 *   x^n, n integer         any x when n > 0; x != 0 when n < 0
 *   x^(p/q), q > 1 odd     the real root: x^(p/q) = (real q-th root of x)^p for
 *                          every real x, so (-8)^(1/3) = -2 and (-8)^(2/3) = 4;
 *                          x != 0 when p < 0
 *   x^(p/q), q even        x >= 0 (x > 0 when p < 0); undefined for x < 0
 *   a^b, b not a number    exp(b log a), a > 0 only
 *   tan x                  cos x != 0
 *   exp sin cos sinh cosh tanh erf Phi phi abs: every real x, with
 *   Phi(x) = erfc(-x/sqrt 2)/2 and phi(x) = exp(-x^2/2)/sqrt(2 pi).
 * A ball certainly outside the domain makes the value BALL_UNDEFINED; a ball
 * that straddles a boundary of it (or a result that is not finite) makes it
 * BALL_UNKNOWN, which more precision may resolve.
 */
#ifndef ITOX_BALL_H
#define ITOX_BALL_H

#include <arb.h>
#include <gmp.h>
#include <stddef.h>
#include <stdint.h>

#include "expr.h"

typedef enum ball_status {
	BALL_OK,        /* a finite ball containing the value */
	BALL_UNDEFINED, /* certainly outside the domain (log of a ball <= 0, 1/0, ...) */
	BALL_UNKNOWN,   /* the ball straddles a domain boundary: more precision may decide */
	BALL_FAILED,    /* not evaluated: an atom without a value, or interrupted (or another
	                 * error already in the context: expr_error) */
} ball_status;

/* Expressions compiled to a list of nodes in dependency order; a node shared
 * by several roots or operands is evaluated once per run. */
typedef struct ball_prog ball_prog;

/* Compile roots over atoms; NULL (and *bad, if given, the node) when a symbol or
 * generic partial in a root is not among the atoms. */
ball_prog *ball_compile(expr_ctx *ctx, size_t nroots, const expr *const *roots, size_t natoms,
                        const expr *const *atoms, const expr **bad);
void ball_free(ball_prog *prog);

/* Generic functions evaluated: each generic application h(a1, ..., an) with
 * derivative counts c that is not among the atoms is H(a1, ..., an) for one
 * fixed, analytic, bounded function H per (name of h, n, c, seed) (ball.c), so
 * applications at equal arguments have equal values whatever their form. */
typedef struct ball_generic_affine {
	const expr *func;            /* a generic function symbol */
	const unsigned char *counts; /* and derivative counts (one per argument) */
	const expr *offset, *scale;  /* atoms: its applications are offset + scale*H */
} ball_generic_affine;
typedef struct ball_generic {
	uint64_t seed;
	size_t naffine; /* optional: functions whose value and size vary with the point */
	const ball_generic_affine *affine;
} ball_generic;
/* ball_compile with generic applications evaluated (generic NULL: as ball_compile). */
ball_prog *ball_compile_generic(expr_ctx *ctx, size_t nroots, const expr *const *roots, size_t natoms,
                                const expr *const *atoms, const ball_generic *generic, const expr **bad);
/* out := H(args) for the function of name with nargs arguments and derivative counts
 * (NULL: none) under seed, at prec bits. */
void ball_generic_value(arb_t out, const char *name, size_t nargs, const unsigned char *counts, uint64_t seed,
                        arb_srcptr args, slong prec);
/* Evaluate every root at prec bits with atom i = values[i] (balls); out[r] and
 * status[r] per root.  BALL_FAILED (statuses unset) when interrupted. */
ball_status ball_run(ball_prog *prog, arb_srcptr values, slong prec, arb_ptr out, ball_status *status);

/* x := the rational q, rounded to prec bits (exact when q is a dyadic that fits). */
void ball_set_mpq(arb_t x, const mpq_t q, slong prec);

/* e at the exact rational point atom i = values[i], at prec bits (compiles each time). */
ball_status ball_eval(expr_ctx *ctx, const expr *e, size_t natoms, const expr *const *atoms,
                      const mpq_t *values, slong prec, arb_t out);
/* ball_eval with generic applications evaluated (see ball_generic). */
ball_status ball_eval_generic(expr_ctx *ctx, const expr *e, size_t natoms, const expr *const *atoms,
                              const mpq_t *values, const ball_generic *generic, slong prec, arb_t out);

/* --- is lhs - rhs zero at a point? --- */

/* The precisions tried in turn are 64, 256, 1024, 4096, 16384 and
 * BALL_MAX_PRECISION bits.  A difference whose ball contains 0 with radius
 * <= 2^-b * scale at prec bits, b = max(BALL_ZERO_BITS, prec / 4), is zero within
 * its bound, where the scale is max(|lhs|, |rhs|) when a side is certainly
 * nonzero, else the largest magnitude of a top-level term of lhs, rhs and the
 * difference (see ball.c). */
#define BALL_MAX_PRECISION 32768
#define BALL_ZERO_BITS     54

typedef enum ball_decision {
	BALL_NONZERO,           /* the difference's ball excludes 0, both sides defined: a counterexample */
	BALL_ZERO_WITHIN_BOUND, /* zero within the bound at some precision */
	BALL_UNDECIDED,         /* see the reason */
} ball_decision;

/* Why undecided: id and message. */
#define BALL_REASONS(X)                                                                                      \
	X(NONE, "decided")                                                                                   \
	X(UNDEFINED, "a side is undefined at the point")                                                     \
	X(UNKNOWN,                                                                                           \
	  "no precision gives a side a finite value at the point (a domain boundary, or cancellation)")      \
	X(CANCELLATION, "the difference contains 0 but is not within its bound at the largest precision")    \
	X(UNBOUND, "a symbol or a partial derivative has no value at the point")                             \
	X(INCONSISTENT, "the canonical difference disagrees with the two sides at the point")                \
	X(INTERRUPTED, "interrupted")
typedef enum ball_reason {
#define BALL_REASON_ENUM(id, message) BALL_REASON_##id,
	BALL_REASONS(BALL_REASON_ENUM)
#undef BALL_REASON_ENUM
} ball_reason;
const char *ball_reason_message(ball_reason reason); /* static text */

typedef struct ball_verdict {
	ball_decision decision;
	ball_reason reason;                          /* BALL_REASON_NONE when decided */
	slong bits;                                  /* the last precision tried */
	char *lhs_text, *rhs_text, *difference_text; /* BALL_NONZERO: decimal values, else NULL */
	bool shortened; /* the sides' texts are too short to differ: difference_text tells */
} ball_verdict;
void ball_verdict_clear(ball_verdict *verdict); /* frees the texts */

/* A claim lhs = rhs compiled once for many points; difference is its canonical
 * lhs - rhs (a second enclosure of the same number) or NULL; generic: as in
 * ball_compile_generic.  NULL (and *bad) when a side is NULL or an atom of it
 * has no value. */
typedef struct ball_claim ball_claim;
ball_claim *ball_claim_new(expr_ctx *ctx, const expr *difference, const expr *lhs, const expr *rhs,
                           size_t natoms, const expr *const *atoms, const ball_generic *generic,
                           const expr **bad);
void ball_claim_free(ball_claim *claim);
/* Decide at the point atom i = values[i], raising the precision until decided. */
ball_decision ball_claim_decide(ball_claim *claim, const mpq_t *values, ball_verdict *out);

/* ball_claim_decide starting at the first precision of at least least bits: a
 * difference smaller than 64-bit rounding (1/10^40) is seen at 1024 bits. */
ball_decision ball_claim_decide_from(ball_claim *claim, const mpq_t *values, slong least, ball_verdict *out);

/* ball_claim_new + ball_claim_decide + ball_claim_free for one point. */
ball_decision ball_compare_zero(expr_ctx *ctx, const expr *difference, const expr *lhs, const expr *rhs,
                                size_t natoms, const expr *const *atoms, const ball_generic *generic,
                                const mpq_t *values, ball_verdict *out);

#endif
