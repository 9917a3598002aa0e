/* decl-change.c - the declarations that change the model's view: a change of
 * measure (measure Q: dW = dZ - lambda*dt) and a change of state variable
 * (state x = log(S) where S = exp(x)).
 *
 * Each checks its names, evaluates its expressions and then changes the
 * model; one that fails leaves the model as it was.  The mathematics is in
 * measure.c and chstate.c.
 */
#include "session-internal.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "chstate.h"
#include "measure.h"
#include "print.h"
#include "xalloc.h"

/* May the noise that replaces w under the measure of st be called as newname
 * (dZ) says?  It must be a name of its own: the noise it replaces (dW = dW -
 * lambda*dt) would make W stand for two Brownian motions, one under P and
 * one under Q; a name declared as anything else, the measure's own name, a
 * name another listed noise already took (chosen[], by noise index) or one
 * whose differential would read as another name's would make results
 * ambiguous.  True when free; otherwise false after a message at the name. */
static bool new_noise_name_free(session *s, const ast_node *st, const ast_node *newname, const expr *w,
                                const expr *const *chosen)
{
	model *m = &s->model;
	const char *zname = newname->text + 1;
	model_entry *clash = model_lookup(m, zname);
	if (clash && clash->kind == MODEL_NOISE && clash->sym == w) {
		report(s, SESSION_INPUT, &newname->loc,
		       "the new noise needs a name of its own: '%s' is the noise it replaces (such as "
		       "'%s%s': dW = d%s%s - ...)",
		       zname, zname, st->text, zname, st->text);
		return false;
	}
	if (clash) {
		report(s, SESSION_INPUT, &newname->loc,
		       "'%s' is already declared as a %s; name the new noise differently (such as '%s%s')",
		       zname, model_kind_name(clash->kind), expr_sym_name(w), st->text);
		return false;
	}
	if (strcmp(zname, st->text) == 0) {
		report(s, SESSION_INPUT, &newname->loc,
		       "'%s' is the name of this measure; name the new noise differently (such as '%s%s')",
		       zname, expr_sym_name(w), st->text);
		return false;
	}
	for (size_t k = 0; k < m->nnoises; k++)
		if (chosen[k] && strcmp(expr_sym_name(chosen[k]), zname) == 0) {
			report(s, SESSION_INPUT, &newname->loc,
			       "'%s' already replaces %s in this measure; each listed noise needs a "
			       "new noise of its own (such as '%s%s')",
			       zname, expr_sym_name(m->noises[k]), expr_sym_name(w), st->text);
			return false;
		}
	/* dS as the new noise's name beside a state S: ddS would be its differential */
	if (zname[0] == 'd' && zname[1]) {
		model_entry *base = model_lookup(m, zname + 1);
		if (base && (base->kind == MODEL_NOISE || base->kind == MODEL_STATE)) {
			report(s, SESSION_INPUT, &newname->loc,
			       "'%s' would be ambiguous: it is the differential of the %s '%s'; name the new "
			       "noise differently",
			       zname, model_kind_name(base->kind), zname + 1);
			return false;
		}
	}
	model_entry *dclash = model_lookup(m, newname->text);
	if (dclash) {
		report(s, SESSION_INPUT, &newname->loc,
		       "'%s' would make the name '%s' (a %s) ambiguous; name the new noise differently",
		       zname, newname->text, model_kind_name(dclash->kind));
		return false;
	}
	return true;
}

/* dW = dZ - lambda*dt: find the new noise name and the dt coefficient. */
bool run_measure(session *s, const ast_node *st)
{
	model *m = &s->model;
	if (!may_declare(s, &st->loc, st->text, MODEL_MEASURE))
		return false;
	if (strcmp(st->text, "P") == 0) {
		report(s, SESSION_INPUT, &st->loc, "'P' names the model's own measure; choose another name");
		return false;
	}
	size_t n = m->nnoises;
	const expr **shift = xcalloc(n ? n : 1, sizeof *shift);
	const expr **names = xcalloc(n ? n : 1, sizeof *names);
	bool *listed = xcalloc(n ? n : 1, sizeof *listed);
	bool ok = true;
	for (size_t i = 0; i < st->nitems && ok; i++) {
		const ast_node *as = st->items[i];
		const expr *w = differential_of(s, as->text);
		long k = w ? model_noise_index(m, w) : -1;
		if (k < 0) {
			char *list = noise_list(s, NULL, "d");
			report(s, SESSION_INPUT, &as->loc,
			       "'%s' is not the differential of a declared noise (the noises: %s)", as->text,
			       *list ? list : "none declared");
			free(list);
			ok = false;
			break;
		}
		if (listed[k]) {
			report(s, SESSION_INPUT, &as->loc, "the noise '%s' is listed twice", as->text + 1);
			ok = false;
			break;
		}
		/* split the right side into the new noise's differential and the rest */
		const ast_node *rhs = as->a;
		const ast_node *newname = NULL, *rest = NULL;
		bool rest_negated = false;
		if (rhs->kind == AST_NAME)
			newname = rhs;
		else if ((rhs->kind == AST_ADD || rhs->kind == AST_SUB) && rhs->a->kind == AST_NAME &&
		         rhs->a->text[0] == 'd' && strcmp(rhs->a->text, "dt") != 0) {
			newname = rhs->a;
			rest = rhs->b;
			rest_negated = rhs->kind == AST_SUB;
		} else if (rhs->kind == AST_ADD && rhs->b->kind == AST_NAME && rhs->b->text[0] == 'd' &&
		           strcmp(rhs->b->text, "dt") != 0) {
			newname = rhs->b;
			rest = rhs->a;
		}
		if (!newname || newname->text[0] != 'd' || !is_identifier(newname->text + 1) ||
		    strcmp(newname->text, "dt") == 0) {
			report(s, SESSION_INPUT, &rhs->loc,
			       "expected dNEW + (shift)*dt, the differential of the new noise plus a drift "
			       "term");
			ok = false;
			break;
		}
		const char *zname = newname->text + 1;
		if (expr_is_function_spelling(zname) || strcmp(zname, "t") == 0) {
			report(s, SESSION_INPUT, &newname->loc,
			       "'%s' is %s; name the new noise differently (such as '%s1')", zname,
			       zname[0] == 't' && !zname[1] ? "reserved (time)" : "a built-in function",
			       zname);
			ok = false;
			break;
		}
		if (!new_noise_name_free(s, st, newname, w, names)) {
			ok = false;
			break;
		}
		const expr *theta = expr_int(s->ctx, 0);
		if (rest) {
			value v;
			if (!eval_node(s, rest, &v)) {
				ok = false;
				break;
			}
			bool pure_dt = v.is_diff;
			for (size_t j = 0; pure_dt && j < v.d.n; j++)
				pure_dt = expr_is_zero(v.d.dw[j]);
			if (!pure_dt) {
				value_free(&v);
				report(s, SESSION_INPUT, &rest->loc,
				       "the shift of a noise must be a coefficient times dt");
				ok = false;
				break;
			}
			theta = rest_negated ? expr_neg(s->ctx, v.d.dt) : v.d.dt;
			value_free(&v);
		}
		listed[k] = true;
		shift[k] = theta;
		names[k] = declared_symbol(s, zname, &st->loc);
		if (!names[k]) {
			ok = false;
			break;
		}
		expr_sym_set_rank(s->ctx, names[k], PRN_RANK_NOISE);
	}
	if (ok && measure_complete(m, listed, shift, names) == MEASURE_SINGULAR) {
		report(s, SESSION_INPUT, &st->loc, "the listed noises are perfectly correlated; list fewer");
		ok = false;
	}
	if (ok && engine_failed(s, &st->loc))
		ok = false;
	model_measure *old = ok ? model_measure_find(m, st->text) : NULL;
	if (old) {
		bool same = true;
		for (size_t k = 0; k < n && same; k++)
			same = old->shift[k] == shift[k] && old->names[k] == names[k];
		if (!same && !replaces(s)) {
			report(s, SESSION_INPUT, &st->loc,
			       "the measure '%s' is already declared; a script cannot redefine it "
			       "(only the REPL replaces a declaration)",
			       st->text);
			ok = false;
		} else if (!same) {
			replaced(s, "replaced the measure %s", st->text);
		}
	}
	if (ok) {
		model_measure *q = model_add_measure(m, st->text);
		for (size_t k = 0; k < n; k++) {
			q->shift[k] = shift[k];
			q->names[k] = names[k];
		}
		model_add(m, st->text, MODEL_MEASURE, NULL);
	}
	free(shift);
	free(names);
	free(listed);
	return ok;
}

/* state x = log(S) where S = exp(x): rewrite the model in x. */
bool run_state(session *s, const ast_node *st)
{
	model *m = &s->model;
	expr_ctx *ctx = s->ctx;
	const ast_node *where = st->b;
	model_entry *old = lookup_kind(s, &where->loc, where->text, MODEL_STATE);
	if (!old)
		return false;
	/* the new name may have been announced by assume (state sigma = ... after assume sigma > 0) */
	model_entry *announced = model_lookup(m, st->text);
	bool was_announced = announced && announced->kind == MODEL_ARG && announced->pending_state;
	model_entry saved = was_announced ? *announced : (model_entry){0};
	if (!was_announced && !check_new_name(s, &st->loc, st->text, false))
		return false;
	const expr *old_sym = old->sym;
	const expr *forward;
	if (!eval_scalar(s, st->a, &forward))
		return false;
	/* the new name is visible in the inverse; its sign follows from the
	 * forward map when that is known (sqrt(v) >= 0, exp(x) > 0) */
	const expr *new_sym = declared_symbol(s, st->text, &st->loc);
	if (!new_sym)
		return false;
	int keep_sign = chstate_infer_sign(ctx, new_sym, forward);
	model_entry *tmp = model_add(m, st->text, MODEL_PARAM, new_sym);
	tmp->pending_state = false;
	const expr *inverse = NULL;
	bool ok = eval_scalar(s, where->a, &inverse);
	model_entry *e = model_lookup(m, st->text);
	if (was_announced) {
		*e = saved;
		e->name = saved.name;
	} else {
		model_forget(m, e);
	}
	if (!ok) {
		expr_sym_set_sign(ctx, new_sym, keep_sign);
		return false;
	}
	chstate_change change = {
	        .old_sym = old_sym, .new_sym = new_sym, .forward = forward, .inverse = inverse};
	const expr *round;
	chstate_error error = chstate_check_inverse(ctx, &change, &round);
	if (error == CHSTATE_ENGINE) {
		engine_failed(s, &st->loc);
		return false;
	}
	if (error == CHSTATE_NOT_INVERSE) {
		char *text = text_expr(s, round);
		report(s, SESSION_INPUT, &where->a->loc,
		       "the inverse does not undo the new state: substituting it gives %s, not %s%s", text,
		       st->text,
		       expr_sym_sign(new_sym) == EXPR_SIGN_UNKNOWN ? " (an assume on the new state may help)"
		                                                   : "");
		free(text);
		expr_sym_set_sign(ctx, new_sym, keep_sign);
		return false;
	}
	if (error == CHSTATE_NOT_ONE_TO_ONE) {
		/* accepting it would give the old state only the values the inverse
		 * reaches (S = sqrt(y) >= 0): an assumption nobody declared */
		int helps = chstate_sign_that_helps(ctx, &change);
		char *text = text_expr(s, round), *forward_text = text_expr(s, forward),
		     *inverse_text = text_expr(s, inverse);
		const char *name = where->text;
		char hint[64];
		if (helps)
			snprintf(hint, sizeof hint, "unless %s %s 0 is assumed", name,
			         helps == EXPR_SIGN_POS ? ">" : "<");
		else
			snprintf(hint, sizeof hint, "where %s can go", name);
		report(s, SESSION_INPUT, &where->a->loc,
		       "the inverse does not give back the old state: %s = %s at %s = %s is %s, not %s, %s",
		       name, inverse_text, st->text, forward_text, text, name, hint);
		free(text);
		free(forward_text);
		free(inverse_text);
		expr_sym_set_sign(ctx, new_sym, keep_sign);
		return false;
	}
	if (chstate_apply(m, &change) != CHSTATE_OK) {
		engine_failed(s, &st->loc);
		return false;
	}
	model_entry *x = model_add(m, st->text, MODEL_STATE, new_sym);
	x->pending_state = false;
	int sign = expr_sym_sign(new_sym);
	if (!x->lo && (sign == EXPR_SIGN_POS || sign == EXPR_SIGN_NONNEG)) {
		/* keep the inferred sign as an assumption, so show and save record
		 * it.  It adds nothing the user did not declare: chstate_infer_sign
		 * took it from the sign oracle on the forward map, that is from the
		 * declared assumptions (y = S^2 > 0 because S > 0 is declared), and
		 * the rest of the old state's range follows as relations on the
		 * inverse (chstate_apply). */
		x->lo = expr_int(ctx, 0);
		x->lo_strict = sign == EXPR_SIGN_POS;
	}
	expr_sym_set_rank(ctx, new_sym, PRN_RANK_STATE);
	/* the old name stays usable as a derived process */
	old = model_lookup(m, where->text);
	old->kind = MODEL_LET;
	old->value = inverse;
	expr_sym_set_rank(ctx, old_sym, PRN_RANK_PARAM);
	return !engine_failed(s, &st->loc);
}
