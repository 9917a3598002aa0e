/* crosscheck.h - the numerical cross-check of a differential (the `check` statement).
 *
 * Given an expression f of the model's states, a differential for it (the
 * engine's own, or one a user derived by hand) and a point, it confirms the
 * symbols with numbers:
 *   1. finite differences: every partial derivative the engine used against a
 *      central difference with a step chosen for the scale;
 *   2. simulation: paths of the states from the point; along each path the
 *      realised quadratic variation sum (df)^2 against the integral of the
 *      squared diffusion, and f(T) - f(0) - integral of the drift against 0,
 *      each with a standard error and a z-score;
 *   3. a verdict with the tolerance used.
 */
#ifndef ITOX_CROSSCHECK_H
#define ITOX_CROSSCHECK_H

#include <stdbool.h>
#include <stddef.h>

#include "expr.h"
#include "ito.h"
#include "model.h"

typedef struct check_input {
	model *m;
	const model_measure *q;	 /* NULL: the model's own measure */
	const expr *f;		 /* the expression whose differential is checked */
	const ito_diff *d;	 /* the differential to test (drift and one coefficient per noise) */
	bool hand_derived;	 /* d came from the user: skip finite differences */
	/* the point: values for every parameter and state that f and the model use */
	size_t nvalues;
	const expr **symbols;
	const double *values;
	/* simulation settings */
	double horizon;		 /* T */
	long steps, paths;
	unsigned long seed;
	bool milstein;		 /* otherwise Euler-Maruyama */
	bool verbose;		 /* add the convergence table */
	long max_work;		 /* limit on steps*paths; 0 for the default */
} check_input;

typedef struct check_result {
	bool consistent;
	bool limit_hit;		 /* steps*paths over the limit: nothing was run */
	char *text;		 /* the human report, lines ending in '\n' */
	char *json;		 /* the fields of the JSON object after "kind":"check", without braces */
	char *error;		 /* set when the check could not run (a missing value, ...) */
} check_result;

void check_run(expr_ctx *ctx, const check_input *in, check_result *out);
void check_result_free(check_result *result);

#endif
