/* eval.h - expressions compiled to straight-line code over doubles.
 *
 * A program computes several outputs from several variables for a block of
 * points at once: each instruction runs over the whole block, so the inner
 * loops are simple and vectorisable.  Shared subexpressions are computed once.
 */
#ifndef ITOX_EVAL_H
#define ITOX_EVAL_H

#include <stddef.h>

#include "expr.h"

typedef struct eval_prog eval_prog;

/* Compile outputs over vars.  Returns NULL when an expression cannot be
 * evaluated (a generic function, a symbol not in vars); *bad is then set to
 * the offending node. */
eval_prog *eval_compile(expr_ctx *ctx, size_t nout, const expr *const *outputs, size_t nvars,
			const expr *const *vars, const expr **bad);
void eval_free(eval_prog *prog);

/* Declare that variables first, first + 1, ... take the same value at every
 * point of each eval_run call (parameters, the time of a step): what depends
 * on them alone is computed once per call.  The results are the same bits. */
void eval_set_uniform(eval_prog *prog, size_t first);

/* Evaluate at npoints points: vars[v*npoints + p], outputs[o*npoints + p]
 * (the two arrays must not overlap: outputs are written as they are computed). */
void eval_run(const eval_prog *prog, size_t npoints, const double *vars, double *outputs);

/* One expression at one point (convenience; compiles each time). */
double eval_at(expr_ctx *ctx, const expr *e, size_t nvars, const expr *const *vars,
	       const double *values, bool *ok);

/* The standard normal distribution function and density. */
double eval_ncdf(double x);
double eval_npdf(double x);

#endif
