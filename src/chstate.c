/* chstate.c - change of state variable (chstate.h). */
#include "chstate.h"

#include <stdlib.h>

#include "ito.h"
#include "xalloc.h"

int chstate_infer_sign(expr_ctx *ctx, const expr *new_sym, const expr *forward)
{
	int keep_sign = expr_sym_sign(new_sym);
	int forward_sign = expr_sign(ctx, forward);
	if (forward_sign != EXPR_SIGN_UNKNOWN)
		expr_sym_set_sign(ctx, new_sym,
		                  keep_sign & forward_sign ? keep_sign & forward_sign : forward_sign);
	return keep_sign;
}

chstate_error chstate_check_inverse(expr_ctx *ctx, const chstate_change *change, const expr **round)
{
	/* the inverse must undo the forward map: forward(inverse(x)) = x for x
	 * where the new state can go (its sign is the forward map's) */
	*round = expr_subst(ctx, change->forward, 1, &change->old_sym, &change->inverse);
	if (expr_error(ctx))
		return CHSTATE_ENGINE;
	if (*round != change->new_sym)
		return CHSTATE_NOT_INVERSE;
	/* and the forward map must be one-to-one where the old state can go:
	 * inverse(forward(X)) = X under X's declared signs, so no point of X's
	 * domain is lost (y = S^2 with S = sqrt(y) would silently make S >= 0) */
	*round = expr_subst(ctx, change->inverse, 1, &change->new_sym, &change->forward);
	if (expr_error(ctx))
		return CHSTATE_ENGINE;
	return *round == change->old_sym ? CHSTATE_OK : CHSTATE_NOT_ONE_TO_ONE;
}

int chstate_sign_that_helps(expr_ctx *ctx, const chstate_change *change)
{
	static const int tries[] = {EXPR_SIGN_POS, EXPR_SIGN_NEG};
	const expr *old_sym = change->old_sym, *new_sym = change->new_sym;
	int old_sign = expr_sym_sign(old_sym), new_sign = expr_sym_sign(new_sym);
	int found = 0;
	for (size_t i = 0; i < sizeof tries / sizeof tries[0] && !found; i++) {
		int sign = old_sign & tries[i];
		if (!sign || sign == old_sign)
			continue; /* not a stronger assumption than the declared one */
		/* the whole change again, as it would run under the assumption */
		expr_sym_set_sign(ctx, old_sym, sign);
		chstate_change again = *change;
		again.forward = expr_rebuild(ctx, change->forward, NULL, NULL);
		if (again.forward)
			chstate_infer_sign(ctx, new_sym, again.forward);
		again.inverse = expr_rebuild(ctx, change->inverse, NULL, NULL);
		const expr *round;
		if (again.forward && again.inverse &&
		    chstate_check_inverse(ctx, &again, &round) == CHSTATE_OK)
			found = sign;
		expr_sym_set_sign(ctx, old_sym, old_sign);
		expr_sym_set_sign(ctx, new_sym, new_sign);
		expr_clear_recoverable(ctx); /* a limit here only means no hint */
	}
	return found;
}

/* The old state's range (X > lo, X <= hi) as relations on inverse(x), but
 * for those the sign oracle proves (S > 0 with S = exp(x)). */
static void range_to_relations(model *m, const model_entry *old, const expr *inverse)
{
	expr_ctx *ctx = m->ctx;
	const expr *bounds[2] = {old->lo, old->hi};
	model_rel rels[2] = {old->lo_strict ? MODEL_REL_GT : MODEL_REL_GE,
	                     old->hi_strict ? MODEL_REL_LT : MODEL_REL_LE};
	for (int i = 0; i < 2; i++) {
		if (!bounds[i])
			continue;
		const expr *difference = expr_sub(ctx, inverse, bounds[i]);
		if (!difference || model_rel_certain(rels[i], expr_sign(ctx, difference)))
			continue;
		model_add_relation(m, inverse, bounds[i], difference, rels[i]);
	}
}

chstate_error chstate_apply(model *m, const chstate_change *change)
{
	expr_ctx *ctx = m->ctx;
	const expr *old_sym = change->old_sym, *inverse = change->inverse;
	ito_diff d;
	ito_d(m, NULL, change->forward, &d);
	if (ito_diff_failed(&d)) {
		ito_diff_free(&d);
		return CHSTATE_ENGINE;
	}
	/* the new state's SDE in its own variable */
	model_sde *old_sde = model_sde_of(m, old_sym);
	size_t position = (size_t)(old_sde - m->sdes);
	const expr *drift = expr_subst(ctx, d.dt, 1, &old_sym, &inverse);
	const expr **dw = xcalloc(m->nnoises ? m->nnoises : 1, sizeof *dw);
	for (size_t k = 0; k < m->nnoises; k++)
		dw[k] = expr_subst(ctx, d.dw[k], 1, &old_sym, &inverse);
	ito_diff_free(&d);
	/* every other coefficient and definition in the new variable */
	for (size_t i = 0; i < m->nsdes; i++) {
		if (i == position)
			continue;
		model_sde *sde = &m->sdes[i];
		sde->drift = expr_subst(ctx, sde->drift, 1, &old_sym, &inverse);
		for (size_t k = 0; k < sde->ndiffusion; k++)
			sde->diffusion[k] = expr_subst(ctx, sde->diffusion[k], 1, &old_sym, &inverse);
	}
	for (size_t i = 0; i < m->nentries; i++)
		if (m->entries[i].kind == MODEL_LET)
			m->entries[i].value = expr_subst(ctx, m->entries[i].value, 1, &old_sym, &inverse);
	for (size_t i = 0; i < m->nmeasures; i++)
		for (size_t k = 0; k < m->measures[i].nnoises; k++)
			m->measures[i].shift[k] =
			        expr_subst(ctx, m->measures[i].shift[k], 1, &old_sym, &inverse);
	/* bounds and relations that use the old state, in the new one */
	for (size_t i = 0; i < m->nentries; i++) {
		model_entry *e = &m->entries[i];
		if (e->sym == old_sym)
			continue;
		if (e->lo)
			e->lo = expr_subst(ctx, e->lo, 1, &old_sym, &inverse);
		if (e->hi)
			e->hi = expr_subst(ctx, e->hi, 1, &old_sym, &inverse);
	}
	for (size_t i = 0; i < m->nrelations; i++) {
		model_relation *r = &m->relations[i];
		r->lhs = expr_subst(ctx, r->lhs, 1, &old_sym, &inverse);
		r->rhs = expr_subst(ctx, r->rhs, 1, &old_sym, &inverse);
		r->difference = expr_subst(ctx, r->difference, 1, &old_sym, &inverse);
	}
	model_entry *old = model_lookup(m, expr_sym_name(old_sym));
	if (old && old->sym == old_sym) {
		range_to_relations(m, old, inverse);
		old->lo = old->hi = NULL; /* the old name becomes a derived process */
	}
	model_sde *sde = &m->sdes[position];
	sde->state = change->new_sym;
	sde->stratonovich = false;
	sde->drift = drift;
	for (size_t k = 0; k < m->nnoises; k++)
		sde->diffusion[k] = dw[k];
	free(dw);
	return CHSTATE_OK;
}
