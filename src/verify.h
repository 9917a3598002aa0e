/* verify.h - is an identity true?  Exact comparison of canonical forms, then
 * randomized identity testing at points sampled inside the declared domains
 * (Schwartz, JACM 1980; Zippel 1979). */
#ifndef ITOX_VERIFY_H
#define ITOX_VERIFY_H

#include <stdbool.h>
#include <stddef.h>

#include "expr.h"
#include "model.h"

typedef struct verify_claim_input {
	bool is_diff;
	size_t nparts;	    /* 1 for expressions; 1 + nnoises for differentials (dt first) */
	const expr **lhs, **rhs;
} verify_claim_input;

typedef enum verify_method { VERIFY_EXACT, VERIFY_NUMERIC } verify_method;

typedef enum verify_verdict { VERIFY_HOLDS, VERIFY_FAILS, VERIFY_UNDECIDED } verify_verdict;

typedef struct verify_result {
	bool holds;		/* verdict == VERIFY_HOLDS */
	verify_verdict verdict;	/* undecided never passes */
	const char *reason;	/* why undecided (a static string), or NULL */
	verify_method method;
	size_t points;		/* points tested (numeric) */
	double max_relative;	/* largest relative difference seen */
	int part;		/* the first part that differs, or -1 */
	const expr *difference; /* lhs - rhs of that part, simplified */
	char *point_text;	/* fails: "S=1.2, mu=0.3: left 1.5, right 1.4", or NULL */
} verify_result;

/* Points tried and the relative tolerance of the numeric test. */
#define VERIFY_POINTS 200
#define VERIFY_TOLERANCE 1e-9

void verify_claim(expr_ctx *ctx, model *m, const verify_claim_input *in, unsigned long seed,
		  verify_result *out);
void verify_result_free(verify_result *result);

#endif
