/* result.h - what a statement produced, as data for the writers.
 *
 * The session fills one result per query, claim, check or display and hands
 * it to the writer of the current format (writer.h).  A result holds
 * expressions and figures, never printed text that a writer would have to
 * read back: the sign and grouping of a coefficient come from its tree.
 */
#ifndef ITOX_RESULT_H
#define ITOX_RESULT_H

#include <stdbool.h>
#include <stddef.h>

#include "crosscheck.h"
#include "expr.h"
#include "print.h"
#include "verify.h"

typedef enum result_kind {
	RESULT_VALUE,        /* an expression or partial: value */
	RESULT_DIFFERENTIAL, /* d EXPR (of), or a differential written out (of NULL): diff */
	RESULT_PRODUCT,      /* a product of differentials: value, the dt coefficient */
	RESULT_DRIFT,        /* drift EXPR: of, value */
	RESULT_GENERATOR,    /* generator EXPR: of, value */
	RESULT_DIFFUSION,    /* diffusion EXPR: of, diff (its dt part is zero) */
	RESULT_QV,           /* qv A [, B]: of, of2 (NULL for qv A), value */
	RESULT_PDE,          /* pde V(...): name, value (the left side of = 0) */
	RESULT_FORWARD,      /* forward p(...): name, of (p_t), value (the right side of p_t = ...) */
	RESULT_COEFFICIENTS, /* coefficients E in x, y: vars, rows (labels: monomials, values) */
	RESULT_MOMENTS,      /* moments X, K: name, vars (m1..mK), rows (values: m_k', solutions
	                      * or NULL with no_solution: t or an expression not known nonzero) */
	RESULT_SDE,          /* sde X [stratonovich]: name, diff (stratonovich set) */
	RESULT_MODEL,        /* show: script (the declarations), sdes (one per state) */
	RESULT_CLAIM,        /* claim: claim, lhs_diff / value and of for the sides */
	RESULT_CHECK,        /* check: check */
} result_kind;

typedef struct stmt_result stmt_result;
struct stmt_result {
	result_kind kind;
	/* where it came from: "model.itox" and its line, or "-e" and the ordinal */
	const char *origin;
	int line;
	const char *statement; /* the statement's source text */
	const char *measure;   /* the measure's name, NULL for the model's own */
	const expr *of, *of2;  /* the expressions queried */
	const char *name;      /* RESULT_SDE: the state; RESULT_PDE: the function */
	const expr *value;
	prn_diff diff;            /* drift, one coefficient per noise, the noises' names */
	const prn_abbrev *abbrev; /* let names that may stand for subexpressions, or NULL */
	const verify_result *claim;
	const check_result *check;
	const expr *const *vars;      /* RESULT_COEFFICIENTS, RESULT_MOMENTS: see the kinds */
	size_t nvars;
	const expr *const *labels;    /* RESULT_COEFFICIENTS: the monomials */
	const expr *const *values;    /* one per row */
	const expr *const *solutions; /* RESULT_MOMENTS: m_k(t), or NULL */
	const expr *no_solution;
	size_t nrows;
	const char *script;      /* RESULT_MODEL: the declarations, one per line */
	const stmt_result *sdes; /* RESULT_MODEL: the state SDEs */
	size_t nsdes;
};

/* "model.itox:12" or "-e:3": the place a validator reads. New string. */
char *result_place(const stmt_result *r);

/* The verdict word of a claim: "holds", "fails" or "undecided". */
const char *result_claim_verdict(const stmt_result *r);

#endif
