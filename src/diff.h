/* diff.h - partial derivatives, memoized per (node, variable). */
#ifndef ITOX_DIFF_H
#define ITOX_DIFF_H

#include "expr.h"

/* d e / d var for a symbol var.  Generic functions get symbolic partials
 * (f_x, f_tx), with the chain rule through their arguments.  NULL on error. */
const expr *diff(expr_ctx *ctx, const expr *e, const expr *var);

/* Repeated partial derivative: d^n e / d vars[0] ... d vars[n-1]. */
const expr *diff_n(expr_ctx *ctx, const expr *e, size_t n, const expr *const *vars);

#endif
