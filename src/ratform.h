/* ratform.h - the rational normal form: an expression put over one
 * denominator and cancelled by the polynomial gcd (FLINT's fmpq_mpoly).
 *
 * Atoms are what is not a sum, a product or an integer power: symbols,
 * function applications (with normalised arguments), generic partials and
 * powers with non-integer exponents.  A rational power x^(p/q) becomes a
 * power of the atom x^(1/q), with the relation (x^(1/q))^q = x.  The result
 * equals the input wherever both are defined.  Long computations poll the
 * context's interrupt and refuse polynomials over its term limit.
 */
#ifndef ITOX_RATFORM_H
#define ITOX_RATFORM_H

#include <stdbool.h>

#include "expr.h"

/* e as num * den^-1 in lowest terms (den factored, monic), as a canonical node; NULL on error. */
const expr *ratform_normal(expr_ctx *ctx, const expr *e);

/* Is e identically zero as a rational function of its atoms?  false also on error. */
bool ratform_is_zero(expr_ctx *ctx, const expr *e);

#endif
