/* verify.h - is an identity true?  Exact first, then certified numbers.
 *
 * The claim is decided on the canonical difference of its two sides.  A zero
 * difference holds exactly.  A nonzero difference that is a rational function
 * of symbols and generic partials at symbols and numbers alone (no function
 * application, which identities such as sin^2 + cos^2 = 1 could tie) fails on
 * any domain with interior, however small it is.  Otherwise both sides are
 * evaluated in ball arithmetic (ball.h) at points drawn from the declared
 * domain (domain.h), each unknown function a smooth function of its
 * arguments' values drawn with the point (ball_generic):
 * fails needs a certified counterexample where both sides are defined, holds
 * needs every point's difference zero within its bound, anything else is
 * undecided, which never passes (Schwartz, JACM 1980; Zippel 1979 for the
 * randomized identity test; Johansson 2017 for ball arithmetic).
 */
#ifndef ITOX_VERIFY_H
#define ITOX_VERIFY_H

#include <stdbool.h>
#include <stddef.h>

#include "expr.h"
#include "model.h"

typedef struct verify_claim_input {
	bool is_diff;
	size_t nparts; /* 1 for expressions; 1 + nnoises for differentials (dt first) */
	const expr **lhs, **rhs;
	size_t points; /* points of a numeric decision; 0: VERIFY_POINTS (fewer only for fuzzing) */
} verify_claim_input;

typedef enum verify_method { VERIFY_EXACT, VERIFY_NUMERIC } verify_method;
typedef enum verify_verdict { VERIFY_HOLDS, VERIFY_FAILS, VERIFY_UNDECIDED } verify_verdict;

typedef struct verify_result {
	bool holds;		 /* verdict == VERIFY_HOLDS */
	verify_verdict verdict;	 /* undecided never passes */
	verify_method method;	 /* exact: decided on the canonical difference */
	const char *reason;	 /* why undecided (a static string), or NULL */
	size_t points;		 /* points tested (numeric) */
	size_t skipped;          /* points no precision could decide (cancellation, a domain
	                          * boundary): the claim is then undecided */
	long bits;		 /* the largest precision a point needed (numeric) */
	int part;		 /* the first part that differs or is undecided, or -1 */
	const expr *difference;	 /* lhs - rhs of that part, in normal form */
	/* fails, or undecided at a point: the point (atoms and their exact values,
	 * as decimals or p/q) and, when it fails, the two sides there */
	size_t natoms;
	const expr **atoms;
	char **values;
	bool functions;		 /* the sides have unknown functions, drawn with the point */
	char *left, *right;	 /* decimal values, enough digits to differ, */
	char *gap;		 /* or, when that would be too many, their difference (else NULL) */
} verify_result;

/* Points tried for a numeric decision, each at VERIFY_LEAST_BITS bits or more. */
#define VERIFY_POINTS 200
#define VERIFY_LEAST_BITS 1024
/* Of those, the first point found zero is decided again at the largest
 * precision (BALL_MAX_PRECISION): a difference below 2^-256 of the sides' size,
 * 1 - tanh(400 + x), is zero within the bound at 1024 bits. */
#define VERIFY_DEEP_POINTS 1

void verify_claim(expr_ctx *ctx, model *m, const verify_claim_input *in, unsigned long seed,
		  verify_result *out);
void verify_result_free(verify_result *result);

#endif
