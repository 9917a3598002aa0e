/* measure.c - the shifts of a change of measure.
 *
 * The listed noises L get the shifts the user wrote.  The unlisted noises U
 * get the smallest change consistent with them: the part of each U noise
 * that is correlated with the L noises moves with them, the independent part
 * does not.
 */
#include "measure.h"

#include <stdlib.h>

#include "xalloc.h"

measure_error measure_complete(const model *m, const bool *listed, const expr **shift, const expr **names)
{
	expr_ctx *ctx = m->ctx;
	size_t n = m->nnoises;
	/* unlisted noises: the minimal change, shift_U = rho_UL rho_LL^-1 shift_L */
	size_t nl = 0;
	size_t *L = xcalloc(n ? n : 1, sizeof *L);
	for (size_t k = 0; k < n; k++)
		if (listed[k])
			L[nl++] = k;
	/* solve rho_LL x = shift_L by Gaussian elimination on expressions */
	const expr **a = xcalloc(nl * (nl + 1) + 1, sizeof *a);
	for (size_t i = 0; i < nl; i++) {
		for (size_t j = 0; j < nl; j++)
			a[i * (nl + 1) + j] = model_corr(m, L[i], L[j]);
		a[i * (nl + 1) + nl] = shift[L[i]];
	}
	measure_error error = MEASURE_OK;
	for (size_t col = 0; col < nl && !error; col++) {
		size_t pivot = col;
		while (pivot < nl && expr_is_zero(a[pivot * (nl + 1) + col]))
			pivot++;
		if (pivot == nl) {
			error = MEASURE_SINGULAR;
			break;
		}
		for (size_t j = 0; j <= nl; j++) {
			const expr *t = a[col * (nl + 1) + j];
			a[col * (nl + 1) + j] = a[pivot * (nl + 1) + j];
			a[pivot * (nl + 1) + j] = t;
		}
		const expr *p = a[col * (nl + 1) + col];
		for (size_t j = 0; j <= nl; j++)
			a[col * (nl + 1) + j] = expr_div(ctx, a[col * (nl + 1) + j], p);
		for (size_t i = 0; i < nl; i++) {
			if (i == col)
				continue;
			const expr *factor = a[i * (nl + 1) + col];
			if (expr_is_zero(factor))
				continue;
			for (size_t j = 0; j <= nl; j++)
				a[i * (nl + 1) + j] = expr_sub(ctx, a[i * (nl + 1) + j],
				                               expr_mul(ctx, factor, a[col * (nl + 1) + j]));
		}
	}
	for (size_t k = 0; k < n && !error; k++) {
		if (listed[k])
			continue;
		names[k] = m->noises[k];
		expr_vec parts = {0};
		for (size_t i = 0; i < nl; i++)
			expr_vec_push(&parts, expr_mul(ctx, model_corr(m, k, L[i]), a[i * (nl + 1) + nl]));
		shift[k] = expr_add_n(ctx, parts.n, parts.items);
		expr_vec_free(&parts);
	}
	free(a);
	free(L);
	return error;
}
