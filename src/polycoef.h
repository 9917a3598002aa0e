/* polycoef.h - an expression as a polynomial in chosen variables.
 *
 * After the rational normal form (ratform.h), e = sum_m c_m * m over
 * monomials m = x_1^d_1 ... x_n^d_n with coefficients c_m free of the
 * variables, or e is not polynomial in them and the first term that is not
 * is named.  Used by the coefficients statement and by the moment equations.
 */
#ifndef ITOX_POLYCOEF_H
#define ITOX_POLYCOEF_H

#include <stdbool.h>
#include <stddef.h>

#include "expr.h"

typedef struct polycoef {
	size_t n;               /* monomials with a nonzero coefficient (at least one: 1 for e = 0) */
	const expr **monomials; /* 1, x, y, x^2, x*y, ...: by total degree, then x's degree first */
	const expr **coefs;     /* the coefficient of each */
	unsigned long *degrees; /* n rows of nvars degrees */
	size_t nvars;
	const expr *bad; /* after a refusal: a term that is not polynomial in the variables */
} polycoef;

/* Split e; false when it is not a polynomial in vars (bad set) or on an
 * engine error (bad NULL, the error in the context). */
bool polycoef_split(expr_ctx *ctx, const expr *e, size_t nvars, const expr *const *vars, polycoef *out);
/* The coefficient of the monomial with the given degrees (0 when absent). */
const expr *polycoef_get(expr_ctx *ctx, const polycoef *p, const unsigned long *degrees);
/* The largest total degree of a monomial. */
unsigned long polycoef_degree(const polycoef *p);
void polycoef_free(polycoef *p);

#endif
