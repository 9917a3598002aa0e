/* ratform-frac.c - the arithmetic of the normal form: fractions num/den of
 * polynomials in the atoms (FLINT fmpq_mpoly, lexicographic order), summed
 * over the lcm of denominators, cancelled by the gcd after each step, with
 * the relations of roots applied (see ratform.c for the mathematics).  Every
 * product is refused when it could exceed the context's term limit, and the
 * interrupt is polled after each step.
 */
#include <stdlib.h>
#include <string.h>

#include "ratform-internal.h"
#include "xalloc.h"

static bool fail_large(ratform_job *j)
{
	expr_fail(j->ctx, EXPR_ERR_TOO_LARGE,
	          "expression too large (a polynomial of the rational normal form exceeds the term limit)");
	return false;
}

/* FLINT's gcd and pow report failure only when exponents overflow. */
static bool fail_exponents(ratform_job *j)
{
	expr_fail(j->ctx, EXPR_ERR_TOO_LARGE,
	          "expression too large (exponents of the rational normal form overflow)");
	return false;
}

/* Does a polynomial of this many terms fit the context's limit? */
static bool fits(ratform_job *j, double terms)
{
	return !j->max_terms || terms <= (double)j->max_terms;
}

static bool checked(ratform_job *j, const fmpq_mpoly_t p)
{
	if (!fits(j, (double)fmpq_mpoly_length(p, j->ring)))
		return fail_large(j);
	return !expr_poll_interrupt(j->ctx);
}

/* a := a * b, refused when the product could exceed the term limit. */
static bool mul_into(ratform_job *j, fmpq_mpoly_t a, const fmpq_mpoly_t b)
{
	if (fmpq_mpoly_is_one(b, j->ring))
		return true;
	double bound = (double)fmpq_mpoly_length(a, j->ring) * (double)fmpq_mpoly_length(b, j->ring);
	if (!fits(j, bound))
		return fail_large(j);
	fmpq_mpoly_mul(a, a, b, j->ring);
	return checked(j, a);
}

/* out := p^k; (a+b+...)^k with t terms has at most C(k+t-1, t-1) terms. */
static bool pow_checked(ratform_job *j, fmpq_mpoly_t out, const fmpq_mpoly_t p, unsigned long k)
{
	slong terms = fmpq_mpoly_length(p, j->ring);
	double count = 1;
	for (slong i = 1; i < terms && count <= 1e15; i++)
		count = count * (double)(k + (unsigned long)i) / (double)i;
	if (!fits(j, count))
		return fail_large(j);
	if (fmpq_mpoly_is_fmpq(p, j->ring)) {
		fmpq_t c;
		fmpq_init(c);
		fmpq_mpoly_get_fmpq(c, p, j->ring);
		unsigned long bits =
		        (unsigned long)FLINT_MAX(fmpz_bits(fmpq_numref(c)), fmpz_bits(fmpq_denref(c)));
		fmpq_clear(c);
		if ((double)bits * (double)k > (double)j->ctx->limits.max_bits) {
			expr_fail(j->ctx, EXPR_ERR_EXPONENT, "number too large (power of a number)");
			return false;
		}
	}
	if (!fmpq_mpoly_pow_ui(out, p, k, j->ring))
		return fail_exponents(j);
	return checked(j, out);
}

/* A new fraction 0/1, freed with the job.  (noinline: inlined into
 * ratform_fraction, GCC 12 takes the new fraction for an
 * 8-byte object and warns with -Wstringop-overflow) */
static __attribute__((noinline)) ratform_frac *new_frac(ratform_job *j)
{
	if (j->nfracs == j->frac_cap) {
		j->frac_cap = j->frac_cap ? 2 * j->frac_cap : 64;
		j->fracs = xreallocarray(j->fracs, j->frac_cap, sizeof *j->fracs);
	}
	j->fracs[j->nfracs] = xmalloc(sizeof **j->fracs);
	ratform_frac *f = j->fracs[j->nfracs++];
	fmpq_mpoly_init(f->num, j->ring);
	fmpq_mpoly_init(f->den, j->ring);
	fmpq_mpoly_one(f->den, j->ring);
	return f;
}

/* p := sum_k p_k w^(k mod L) P^(k div L) Q^(M - k div L) for p = sum_k p_k w^k:
 * Q^M p with w^L = P/Q applied, given powers[i] = P^i, den_powers[i] = Q^i. */
static bool rewrite_powers(ratform_job *j, fmpq_mpoly_t p, const ratform_group *g, unsigned long most,
                           fmpq_mpoly_struct *powers, fmpq_mpoly_struct *den_powers)
{
	fmpq_mpoly_univar_t by_power;
	fmpq_mpoly_t sum, term, w;
	fmpq_mpoly_univar_init(by_power, j->ring);
	fmpq_mpoly_init(sum, j->ring);
	fmpq_mpoly_init(term, j->ring);
	fmpq_mpoly_init(w, j->ring);
	fmpq_mpoly_to_univar(by_power, p, g->var, j->ring);
	bool ok = true;
	for (slong i = 0; i < fmpq_mpoly_univar_length(by_power, j->ring) && ok; i++) {
		unsigned long k = (unsigned long)fmpq_mpoly_univar_get_term_exp_si(by_power, i, j->ring);
		unsigned long whole = k / g->degree;
		fmpq_mpoly_univar_get_term_coeff(term, by_power, i, j->ring);
		fmpq_mpoly_gen(w, g->var, j->ring);
		ok = pow_checked(j, w, w, k % g->degree) && mul_into(j, term, w) &&
		     mul_into(j, term, powers + whole) && mul_into(j, term, den_powers + (most - whole));
		if (ok) {
			fmpq_mpoly_add(sum, sum, term, j->ring);
			ok = checked(j, sum);
		}
	}
	if (ok)
		fmpq_mpoly_swap(p, sum, j->ring);
	fmpq_mpoly_univar_clear(by_power, j->ring);
	fmpq_mpoly_clear(sum, j->ring);
	fmpq_mpoly_clear(term, j->ring);
	fmpq_mpoly_clear(w, j->ring);
	return ok;
}

/* Apply each relation w^L = P/Q to num/den, from the tallest base down:
 * with M the largest k div L of a power w^k in either, num and den are both
 * multiplied by Q^M and w^k becomes w^(k mod L) P^(k div L) Q^(M - k div L). */
static bool reduce(ratform_job *j, ratform_frac *f)
{
	bool ok = true;
	for (size_t r = j->nrelations; r-- > 0 && ok;) {
		const ratform_group *g = &j->groups[j->relations[r]];
		slong top = FLINT_MAX(fmpq_mpoly_degree_si(f->num, g->var, j->ring),
		                      fmpq_mpoly_degree_si(f->den, g->var, j->ring));
		if (top < (slong)g->degree)
			continue;
		unsigned long most = (unsigned long)top / g->degree;
		fmpq_mpoly_struct *powers = xmalloc(2 * (most + 1) * sizeof *powers);
		fmpq_mpoly_struct *den_powers = powers + most + 1;
		for (unsigned long i = 0; i <= most; i++) {
			fmpq_mpoly_init(powers + i, j->ring);
			fmpq_mpoly_init(den_powers + i, j->ring);
			fmpq_mpoly_one(powers + i, j->ring);
			fmpq_mpoly_one(den_powers + i, j->ring);
			if (i > 0 && ok) {
				fmpq_mpoly_set(powers + i, powers + i - 1, j->ring);
				fmpq_mpoly_set(den_powers + i, den_powers + i - 1, j->ring);
				ok = mul_into(j, powers + i, g->relation) &&
				     mul_into(j, den_powers + i, g->relation_den);
			}
		}
		ok = ok && rewrite_powers(j, f->num, g, most, powers, den_powers) &&
		     rewrite_powers(j, f->den, g, most, powers, den_powers);
		for (unsigned long i = 0; i <= most; i++) {
			fmpq_mpoly_clear(powers + i, j->ring);
			fmpq_mpoly_clear(den_powers + i, j->ring);
		}
		free(powers);
	}
	return ok;
}

/* Apply the relations, divide num and den by their gcd (unless known to be
 * 1) and make den monic. */
static bool cancel_known(ratform_job *j, ratform_frac *f, bool coprime)
{
	if (j->nrelations && !reduce(j, f))
		return false;
	if (fmpq_mpoly_is_zero(f->den, j->ring)) {
		expr_fail(j->ctx, EXPR_ERR_DIVISION, "division by zero");
		return false;
	}
	if (fmpq_mpoly_is_zero(f->num, j->ring)) {
		fmpq_mpoly_one(f->den, j->ring);
		return true;
	}
	if (!coprime && !fmpq_mpoly_is_fmpq(f->den, j->ring)) {
		fmpq_mpoly_t g;
		fmpq_mpoly_init(g, j->ring);
		bool ok = fmpq_mpoly_gcd(g, f->num, f->den, j->ring);
		if (ok && !fmpq_mpoly_is_one(g, j->ring))
			ok = fmpq_mpoly_divides(f->num, f->num, g, j->ring) &&
			     fmpq_mpoly_divides(f->den, f->den, g, j->ring);
		fmpq_mpoly_clear(g, j->ring);
		if (!ok)
			return fail_exponents(j);
	}
	fmpq_t lead;
	fmpq_init(lead);
	fmpq_mpoly_get_term_coeff_fmpq(lead, f->den, 0, j->ring);
	if (!fmpq_is_one(lead)) {
		fmpq_mpoly_scalar_div_fmpq(f->num, f->num, lead, j->ring);
		fmpq_mpoly_scalar_div_fmpq(f->den, f->den, lead, j->ring);
	}
	fmpq_clear(lead);
	return !expr_poll_interrupt(j->ctx);
}

static bool cancel(ratform_job *j, ratform_frac *f)
{
	return cancel_known(j, f, false);
}

/* acc := acc + t: with g = gcd(d1, d2), n1/d1 + n2/d2 = (n1 d2/g + n2 d1/g) / (d1 d2/g).
 * *coprime stays true only when g = 1: then, both in lowest terms, so is
 * the sum (a prime factor of d1 dividing n1 d2 + n2 d1 would divide n1). */
static bool add_frac(ratform_job *j, ratform_frac *acc, const ratform_frac *t, bool *coprime)
{
	if (fmpq_mpoly_equal(acc->den, t->den, j->ring)) {
		fmpq_mpoly_add(acc->num, acc->num, t->num, j->ring);
		return checked(j, acc->num);
	}
	fmpq_mpoly_t g, d1, d2, n2;
	fmpq_mpoly_init(g, j->ring);
	fmpq_mpoly_init(d1, j->ring);
	fmpq_mpoly_init(d2, j->ring);
	fmpq_mpoly_init(n2, j->ring);
	bool ok = fmpq_mpoly_gcd(g, acc->den, t->den, j->ring) &&
	          fmpq_mpoly_divides(d1, acc->den, g, j->ring) && fmpq_mpoly_divides(d2, t->den, g, j->ring);
	if (!ok)
		fail_exponents(j);
	*coprime = *coprime && fmpq_mpoly_is_one(g, j->ring);
	fmpq_mpoly_set(n2, t->num, j->ring);
	ok = ok && mul_into(j, acc->num, d2) && mul_into(j, n2, d1) && mul_into(j, acc->den, d2);
	if (ok) {
		fmpq_mpoly_add(acc->num, acc->num, n2, j->ring);
		ok = checked(j, acc->num);
	}
	fmpq_mpoly_clear(g, j->ring);
	fmpq_mpoly_clear(d1, j->ring);
	fmpq_mpoly_clear(d2, j->ring);
	fmpq_mpoly_clear(n2, j->ring);
	return ok;
}

/* A sum: the numerators of terms with the same denominator are added first
 * (a canonical sum has few distinct denominators) and cancelled, then the
 * groups are added; the last gcd is skipped when the denominators were
 * pairwise coprime (and no relation rewrote the result). */
static bool sum_frac(ratform_job *j, const expr *e, ratform_frac *out)
{
	ratform_frac *groups = xmalloc(e->nops * sizeof *groups);
	size_t *sizes = xcalloc(e->nops, sizeof *sizes);
	size_t n = 0;
	bool ok = true;
	for (size_t i = 0; i < e->nops && ok; i++) {
		const ratform_frac *t = ratform_fraction(j, e->u.add.terms[i]);
		if (!t) {
			ok = false;
			break;
		}
		size_t k = 0;
		while (k < n && !fmpq_mpoly_equal(groups[k].den, t->den, j->ring))
			k++;
		if (k == n) {
			fmpq_mpoly_init(groups[n].num, j->ring);
			fmpq_mpoly_init(groups[n].den, j->ring);
			fmpq_mpoly_set(groups[n].den, t->den, j->ring);
			n++;
		}
		sizes[k]++;
		fmpq_mpoly_add(groups[k].num, groups[k].num, t->num, j->ring);
		ok = checked(j, groups[k].num);
	}
	for (size_t k = 0; k < n && ok && n > 1; k++)
		if (sizes[k] > 1)
			ok = cancel(j, &groups[k]);
	if (ok && n > 0) {
		fmpq_mpoly_swap(out->num, groups[0].num, j->ring);
		fmpq_mpoly_swap(out->den, groups[0].den, j->ring);
	}
	bool coprime = n > 1 && j->nrelations == 0;
	for (size_t k = 1; k < n && ok; k++)
		ok = add_frac(j, out, &groups[k], &coprime);
	for (size_t k = 0; k < n; k++) {
		fmpq_mpoly_clear(groups[k].num, j->ring);
		fmpq_mpoly_clear(groups[k].den, j->ring);
	}
	free(groups);
	free(sizes);
	return ok && cancel_known(j, out, coprime);
}

/* out := out * b^k for an integer k (b^-k puts b's denominator on top). */
static bool mul_power(ratform_job *j, ratform_frac *out, const ratform_frac *b, long k)
{
	fmpq_mpoly_t top, bottom;
	fmpq_mpoly_init(top, j->ring);
	fmpq_mpoly_init(bottom, j->ring);
	unsigned long n = k < 0 ? -(unsigned long)k : (unsigned long)k;
	bool ok = pow_checked(j, top, k < 0 ? b->den : b->num, n) &&
	          pow_checked(j, bottom, k < 0 ? b->num : b->den, n) && mul_into(j, out->num, top) &&
	          mul_into(j, out->den, bottom);
	fmpq_mpoly_clear(top, j->ring);
	fmpq_mpoly_clear(bottom, j->ring);
	return ok;
}

/* p := p * prod x_v^e_v over the variables with e_v of the given sign. */
static bool mul_monomial(ratform_job *j, fmpq_mpoly_t p, const slong *exps, int sign)
{
	ulong *part = xcalloc((size_t)j->nvars + 1, sizeof *part);
	bool any = false;
	for (slong v = 0; v < j->nvars; v++)
		if ((sign > 0 && exps[v] > 0) || (sign < 0 && exps[v] < 0)) {
			part[v] = (ulong)(sign > 0 ? exps[v] : -exps[v]);
			any = true;
		}
	bool ok = true;
	if (any) {
		fmpq_mpoly_t m;
		fmpq_mpoly_init(m, j->ring);
		fmpq_mpoly_push_term_ui_ui(m, 1, part, j->ring);
		ok = mul_into(j, p, m);
		fmpq_mpoly_clear(m, j->ring);
	}
	free(part);
	return ok;
}

/* A product c * prod b_i^x_i, or an atom on its own. */
static bool product_frac(ratform_job *j, const expr *e, ratform_frac *out)
{
	fmpq_t c;
	fmpq_init(c);
	if (e->kind == EXPR_MUL)
		fmpq_set_mpq(c, e->u.mul.coef);
	else
		fmpq_one(c);
	fmpq_mpoly_set_fmpq(out->num, c, j->ring);
	fmpq_clear(c);
	slong *exps = xcalloc((size_t)j->nvars + 1, sizeof *exps);
	bool ok = true;
	size_t n = e->kind == EXPR_MUL ? e->nops : 1;
	for (size_t i = 0; i < n && ok; i++) {
		size_t mark = j->npieces;
		ratform_factor_pieces(j, e, i);
		size_t end = j->npieces;
		for (size_t k = mark; k < end && ok; k++) {
			const ratform_piece *p = &j->pieces[k];
			if (p->monomial) {
				slong exponent;
				slong var = ratform_piece_var(j, p, &exponent);
				ok = var >= 0;
				if (ok)
					exps[var] += exponent;
				continue;
			}
			if (!mpz_fits_slong_p(mpq_numref(p->power))) {
				expr_fail(j->ctx, EXPR_ERR_EXPONENT, "exponent too large");
				ok = false;
				break;
			}
			long power = mpz_get_si(mpq_numref(p->power));
			const ratform_frac *b = ratform_fraction(j, p->base); /* may move the piece stack */
			ok = b && mul_power(j, out, b, power);
		}
		j->npieces = mark;
	}
	ok = ok && mul_monomial(j, out->num, exps, 1) && mul_monomial(j, out->den, exps, -1);
	free(exps);
	return ok && cancel(j, out);
}

/* The fraction of a node (memoized: canonical sums share their terms). */
const ratform_frac *ratform_fraction(ratform_job *j, const expr *e)
{
	size_t known = ratform_pair_get(&j->frac_of, e, NULL);
	if (known)
		return j->fracs[known - 1];
	if (expr_poll_interrupt(j->ctx))
		return NULL;
	ratform_frac *f = new_frac(j);
	size_t index = j->nfracs;
	bool ok = true;
	if (e->kind == EXPR_NUM) {
		fmpq_t c;
		fmpq_init(c);
		fmpq_set_mpq(c, e->u.num);
		fmpq_mpoly_set_fmpq(f->num, c, j->ring);
		fmpq_clear(c);
	} else if (e->kind == EXPR_ADD) {
		ok = sum_frac(j, e, f);
	} else {
		ok = product_frac(j, e, f);
	}
	if (!ok)
		return NULL;
	ratform_pair_put(&j->frac_of, e, NULL, index);
	return f;
}

/* The relations w^L = P/Q of the candidate groups (the fraction of the
 * base; of u^2 for abs(u)), set up from the lowest base up, so a base's own
 * atoms are already reduced. */
bool ratform_set_relations(ratform_job *j)
{
	j->relations = xmalloc((j->ngroups + 1) * sizeof *j->relations);
	for (size_t k = 0; k < j->ngroups; k++)
		if (j->groups[k].candidate)
			j->relations[j->nrelations++] = k;
	size_t ncandidates = j->nrelations;
	/* insertion sort by the height of the base (few candidates) */
	for (size_t a = 1; a < ncandidates; a++)
		for (size_t b = a; b > 0 && j->groups[j->relations[b - 1]].base->height >
		                                    j->groups[j->relations[b]].base->height;
		     b--) {
			size_t swap = j->relations[b];
			j->relations[b] = j->relations[b - 1];
			j->relations[b - 1] = swap;
		}
	size_t *order = xmalloc((ncandidates + 1) * sizeof *order);
	memcpy(order, j->relations, ncandidates * sizeof *order);
	j->nrelations = 0;
	bool ok = true;
	for (size_t i = 0; i < ncandidates && ok; i++) {
		ratform_group *g = &j->groups[order[i]];
		bool abs_base = expr_is_fun(g->base, EXPR_F_ABS);
		const ratform_frac *b = ratform_fraction(j, abs_base ? g->base->u.fun.arg : g->base);
		if (!b) {
			ok = false;
			break;
		}
		fmpq_mpoly_init(g->relation, j->ring);
		fmpq_mpoly_init(g->relation_den, j->ring);
		g->has_relation = true;
		ok = pow_checked(j, g->relation, b->num, abs_base ? 2 : 1) &&
		     pow_checked(j, g->relation_den, b->den, abs_base ? 2 : 1);
		j->relations[j->nrelations++] = order[i];
	}
	free(order);
	return ok;
}

/* Clear the square roots (relations of degree 2, abs included) out of the
 * denominator: with den = D0 + D1 w, (D0 - D1 w)(D0 + D1 w) = D0^2 - D1^2 w^2
 * and w^2 = P/Q, from the tallest root down (a conjugate in a lower root
 * brings back no taller one), then cancel.  Over the basis 1, w of each root
 * num/den is then unique.  false when a root of higher degree stays in the
 * denominator or a conjugate is 0 (a zero divisor: sqrt(u^2) - u), or on
 * error. */
bool ratform_rationalise(ratform_job *j, ratform_frac *f)
{
	bool ok = true;
	fmpq_mpoly_univar_t by_power;
	fmpq_mpoly_t conjugate, w;
	fmpq_mpoly_univar_init(by_power, j->ring);
	fmpq_mpoly_init(conjugate, j->ring);
	fmpq_mpoly_init(w, j->ring);
	for (size_t r = j->nrelations; r-- > 0 && ok;) {
		const ratform_group *g = &j->groups[j->relations[r]];
		slong degree = fmpq_mpoly_degree_si(f->den, g->var, j->ring);
		if (degree < 1)
			continue;
		if (g->degree != 2 || degree != 1) {
			ok = false;
			break;
		}
		/* conjugate = D0 - D1 w */
		fmpq_mpoly_to_univar(by_power, f->den, g->var, j->ring);
		fmpq_mpoly_zero(conjugate, j->ring);
		for (slong i = 0; i < fmpq_mpoly_univar_length(by_power, j->ring); i++) {
			fmpq_mpoly_univar_get_term_coeff(w, by_power, i, j->ring);
			if (fmpq_mpoly_univar_get_term_exp_si(by_power, i, j->ring) == 1) {
				fmpq_mpoly_t gen;
				fmpq_mpoly_init(gen, j->ring);
				fmpq_mpoly_gen(gen, g->var, j->ring);
				fmpq_mpoly_mul(w, w, gen, j->ring);
				fmpq_mpoly_clear(gen, j->ring);
				fmpq_mpoly_neg(w, w, j->ring);
			}
			fmpq_mpoly_add(conjugate, conjugate, w, j->ring);
		}
		ok = mul_into(j, f->num, conjugate) && mul_into(j, f->den, conjugate) && reduce(j, f) &&
		     fmpq_mpoly_degree_si(f->den, g->var, j->ring) < 1 &&
		     !fmpq_mpoly_is_zero(f->den, j->ring);
	}
	fmpq_mpoly_univar_clear(by_power, j->ring);
	fmpq_mpoly_clear(conjugate, j->ring);
	fmpq_mpoly_clear(w, j->ring);
	return ok && cancel(j, f);
}
