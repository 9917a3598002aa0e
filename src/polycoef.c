/* polycoef.c - coefficients of an expression as a polynomial in variables.
 *
 * The rational normal form writes e as p/q with polynomials p, q in the
 * atoms, gcd(p, q) = 1, and the canonical constructors expand p*q^-1 into
 * terms (ratform.c).  e is a polynomial in x_1..x_n with coefficients free
 * of them exactly when every such term is c * x_1^d_1 ... x_n^d_n with c free
 * of the x_i and integers d_i >= 0: the form is unique, so a variable left
 * in a denominator, under a root or inside a function is a true dependence
 * (wherever e is defined), not an artefact of how e was written.
 */
#include "polycoef.h"

#include <stdlib.h>
#include <string.h>

#include "ratform.h"
#include "xalloc.h"

/* The degree of x in the term (a product, a power or x itself); false when
 * x occurs other than as a nonnegative integer power of itself. */
static bool degree_in(expr_ctx *ctx, const expr *term, const expr *x, unsigned long *degree)
{
	*degree = 0;
	if (term == x) {
		*degree = 1;
		return true;
	}
	if (expr_kind_of(term) != EXPR_MUL)
		return !expr_has(ctx, term, x);
	for (size_t i = 0; i < expr_nops(term); i++) {
		const expr *base = expr_mul_base(term, i), *exponent = expr_mul_exponent(term, i);
		if (base != x) {
			if (expr_has(ctx, base, x) || expr_has(ctx, exponent, x))
				return false;
			continue;
		}
		if (!expr_is_integer(exponent) || mpq_sgn(expr_num_value(exponent)) < 0 ||
		    !mpz_fits_ulong_p(mpq_numref(expr_num_value(exponent))))
			return false;
		*degree = mpz_get_ui(mpq_numref(expr_num_value(exponent)));
	}
	return true;
}

static unsigned long total(const unsigned long *degrees, size_t nvars)
{
	unsigned long sum = 0;
	for (size_t v = 0; v < nvars; v++)
		sum += degrees[v];
	return sum;
}

/* By total degree, then the first variable's degree (higher first), ... */
static int compare_degrees(const unsigned long *a, const unsigned long *b, size_t nvars)
{
	unsigned long ta = total(a, nvars), tb = total(b, nvars);
	if (ta != tb)
		return ta < tb ? -1 : 1;
	for (size_t v = 0; v < nvars; v++)
		if (a[v] != b[v])
			return a[v] > b[v] ? -1 : 1;
	return 0;
}

static size_t find_or_insert(expr_ctx *ctx, polycoef *p, const unsigned long *degrees,
                             const expr *const *vars, size_t *capacity)
{
	size_t at = 0;
	while (at < p->n) {
		int c = compare_degrees(p->degrees + at * p->nvars, degrees, p->nvars);
		if (c == 0)
			return at;
		if (c > 0)
			break;
		at++;
	}
	if (p->n == *capacity) {
		*capacity = *capacity ? 2 * *capacity : 8;
		p->monomials = xreallocarray(p->monomials, *capacity, sizeof *p->monomials);
		p->coefs = xreallocarray(p->coefs, *capacity, sizeof *p->coefs);
		p->degrees =
		        xreallocarray(p->degrees, *capacity * (p->nvars ? p->nvars : 1), sizeof *p->degrees);
	}
	memmove(p->monomials + at + 1, p->monomials + at, (p->n - at) * sizeof *p->monomials);
	memmove(p->coefs + at + 1, p->coefs + at, (p->n - at) * sizeof *p->coefs);
	memmove(p->degrees + (at + 1) * p->nvars, p->degrees + at * p->nvars,
	        (p->n - at) * p->nvars * sizeof *p->degrees);
	const expr *monomial = expr_int(ctx, 1);
	for (size_t v = 0; v < p->nvars; v++) {
		p->degrees[at * p->nvars + v] = degrees[v];
		if (degrees[v])
			monomial = expr_mul(ctx, monomial,
			                    expr_pow(ctx, vars[v], expr_int(ctx, (long)degrees[v])));
	}
	p->monomials[at] = monomial;
	p->coefs[at] = expr_int(ctx, 0);
	p->n++;
	return at;
}

bool polycoef_split(expr_ctx *ctx, const expr *e, size_t nvars, const expr *const *vars, polycoef *out)
{
	memset(out, 0, sizeof *out);
	out->nvars = nvars;
	const expr *normal = e ? ratform_normal(ctx, e) : NULL;
	if (!normal)
		return false;
	size_t nterms = expr_kind_of(normal) == EXPR_ADD ? expr_nops(normal) : 1;
	unsigned long *degrees = xcalloc(nvars ? nvars : 1, sizeof *degrees);
	size_t capacity = 0;
	bool ok = true;
	for (size_t i = 0; i < nterms && ok; i++) {
		const expr *term =
		        nterms == 1 && expr_kind_of(normal) != EXPR_ADD ? normal : expr_op(normal, i);
		if (expr_is_zero(term))
			continue;
		const expr *monomial = expr_int(ctx, 1);
		for (size_t v = 0; v < nvars && ok; v++) {
			ok = degree_in(ctx, term, vars[v], &degrees[v]);
			if (ok && degrees[v])
				monomial = expr_mul(ctx, monomial,
				                    expr_pow(ctx, vars[v], expr_int(ctx, (long)degrees[v])));
		}
		if (!ok) {
			out->bad = term;
			break;
		}
		size_t at = find_or_insert(ctx, out, degrees, vars, &capacity);
		out->coefs[at] = expr_add(ctx, out->coefs[at], expr_div(ctx, term, monomial));
	}
	free(degrees);
	if (ok && out->n == 0) {
		unsigned long zeros[EXPR_MAX_FUNC_ARGS] = {0};
		find_or_insert(ctx, out, zeros, vars, &capacity);
	}
	if (ok && expr_error(ctx))
		ok = false;
	if (!ok) {
		const expr *bad = out->bad;
		polycoef_free(out);
		out->bad = bad;
	}
	return ok;
}

const expr *polycoef_get(expr_ctx *ctx, const polycoef *p, const unsigned long *degrees)
{
	for (size_t i = 0; i < p->n; i++)
		if (compare_degrees(p->degrees + i * p->nvars, degrees, p->nvars) == 0)
			return p->coefs[i];
	return expr_int(ctx, 0);
}

unsigned long polycoef_degree(const polycoef *p)
{
	unsigned long most = 0;
	for (size_t i = 0; i < p->n; i++) {
		unsigned long t = total(p->degrees + i * p->nvars, p->nvars);
		if (t > most && !expr_is_zero(p->coefs[i]))
			most = t;
	}
	return most;
}

void polycoef_free(polycoef *p)
{
	free(p->monomials);
	free(p->coefs);
	free(p->degrees);
	memset(p, 0, sizeof *p);
}
