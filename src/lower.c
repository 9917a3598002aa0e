/* lower.c - syntax to engine values.
 *
 * Resolves names against the model (parameters, states, noises, lets,
 * functions and their partials f_x, differentials dX, the noises of a
 * measure) and evaluates a syntax tree to a canonical expression or to a
 * differential a*dt + sum_k b_k*dW_k.  Long sums and products are folded in
 * loops, so their length costs no stack.
 */
#include "session-internal.h"

#include <ctype.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "diff.h"
#include "eval.h"
#include "rat.h"
#include "xalloc.h"

void value_free(value *v)
{
	if (v->is_diff)
		ito_diff_free(&v->d);
	v->is_diff = false;
}

/* ------------------------------------------------------------------ names */

bool is_identifier(const char *text)
{
	if (!isalpha((unsigned char)*text))
		return false;
	for (const char *c = text; *c; c++)
		if (!isalnum((unsigned char)*c) && *c != '_')
			return false;
	return true;
}

/* A partial-derivative name f_x, f_tx, f_{x1,x2}: the function and counts. */
static bool parse_partial_name(session *s, const char *name, model_entry **func, unsigned char *counts)
{
	for (const char *u = strchr(name, '_'); u; u = strchr(u + 1, '_')) {
		char *stem = xstrndup(name, (size_t)(u - name));
		model_entry *entry = model_lookup(&s->model, stem);
		free(stem);
		if (!entry || entry->kind != MODEL_FUNC)
			continue;
		const expr *f = entry->sym;
		size_t nargs = expr_func_arity(f);
		memset(counts, 0, EXPR_MAX_FUNC_ARGS);
		const char *rest = u + 1;
		bool ok = *rest != '\0';
		if (*rest == '{') {
			const char *close = strchr(rest, '}');
			ok = close && close[1] == '\0';
			const char *p = rest + 1;
			while (ok && p < close) {
				const char *comma = memchr(p, ',', (size_t)(close - p));
				const char *end = comma ? comma : close;
				size_t k = 0;
				while (k < nargs &&
				       !(strlen(expr_func_arg_name(f, k)) == (size_t)(end - p) &&
				         strncmp(expr_func_arg_name(f, k), p, (size_t)(end - p)) == 0))
					k++;
				ok = k < nargs && counts[k] < 255;
				if (ok)
					counts[k]++;
				p = end + 1;
			}
		} else {
			for (const char *c = rest; *c && ok; c++) {
				size_t k = 0;
				while (k < nargs && !(expr_func_arg_name(f, k)[0] == *c &&
				                      expr_func_arg_name(f, k)[1] == '\0'))
					k++;
				ok = k < nargs && counts[k] < 255;
				if (ok)
					counts[k]++;
			}
		}
		if (ok) {
			*func = entry;
			return true;
		}
	}
	return false;
}

static const expr *declared_args_application(session *s, const expr *f, const unsigned char *counts)
{
	size_t nargs = expr_func_arity(f);
	const expr *args[EXPR_MAX_FUNC_ARGS];
	for (size_t i = 0; i < nargs; i++)
		args[i] = expr_sym(s->ctx, expr_func_arg_name(f, i));
	return expr_fapp(s->ctx, f, counts, args);
}

/* The symbol of a name that has dynamics: "dX" -> X when X is a state or noise. */
const expr *differential_of(session *s, const char *name)
{
	if (name[0] != 'd' || !name[1])
		return NULL;
	model_entry *entry = model_lookup(&s->model, name + 1);
	if (entry && (entry->kind == MODEL_STATE || entry->kind == MODEL_NOISE))
		return entry->sym;
	return NULL;
}

/* ------------------------------------------------------------------ evaluation */

bool eval_scalar(session *s, const ast_node *n, const expr **out)
{
	value v = {0};
	if (!eval_node(s, n, &v))
		return false;
	if (v.is_diff) {
		value_free(&v);
		report(s, SESSION_INPUT, &n->loc,
		       "a differential is not allowed here; expected an expression");
		return false;
	}
	*out = v.e;
	return true;
}

/* Would Itô's formula apply to the part of a process written at n (the
 * expression part, lowered on its own)?  False after reporting at n. */
static bool part_applies(session *s, const ast_node *n, const expr *part)
{
	if (!part)
		return !engine_failed(s, &n->loc);
	if (!ito_refuses(&s->model, part, true))
		return true;
	engine_failed(s, &n->loc);
	return false;
}

/* The parts of n that must have Itô's formula themselves, whatever the
 * whole simplified to (eval_process): each root, log and power as written,
 * and each quotient's reciprocal.  sqrt(g)^2 is g, but where g < 0 sqrt(g)
 * has no value, so there is no such process; X^2/X is X, but not at X = 0.
 * A let's value is checked where it is used as a whole, not here. */
static bool written_parts_defined(session *s, const ast_node *n)
{
	if (!n)
		return true;
	const expr *part;
	switch (n->kind) {
	case AST_NEG:
		return written_parts_defined(s, n->a);
	case AST_ADD:
	case AST_SUB:
	case AST_MUL:
		return written_parts_defined(s, n->a) && written_parts_defined(s, n->b);
	case AST_DIV:
		if (!written_parts_defined(s, n->a) || !written_parts_defined(s, n->b) ||
		    !eval_scalar(s, n->b, &part))
			return false;
		return part_applies(s, n->b, expr_pow(s->ctx, part, expr_int(s->ctx, -1)));
	case AST_POW:
		if (!written_parts_defined(s, n->a) || !written_parts_defined(s, n->b) ||
		    !eval_scalar(s, n, &part))
			return false;
		return part_applies(s, n, part);
	case AST_CALL:
		for (size_t i = 0; i < n->nitems; i++)
			if (!written_parts_defined(s, n->items[i]))
				return false;
		if (n->nitems != 1 || (strcmp(n->text, "sqrt") != 0 && strcmp(n->text, "log") != 0))
			return true;
		if (!eval_scalar(s, n, &part))
			return false;
		return part_applies(s, n, part);
	default:
		return true;
	}
}

bool eval_process(session *s, const ast_node *n, const expr **out)
{
	if (!eval_scalar(s, n, out))
		return false;
	/* what Itô's formula refuses as a whole, ito_d says better (the
	 * function and its bad point) */
	return ito_refuses(&s->model, *out, false) || written_parts_defined(s, n);
}

static bool make_scalar(session *s, const ast_node *n, const expr *e, value *out)
{
	if (!e) {
		if (!engine_failed(s, &n->loc))
			report(s, SESSION_INPUT, &n->loc, "cannot evaluate this expression");
		return false;
	}
	out->is_diff = false;
	out->e = e;
	return true;
}

static bool make_diff(session *s, const ast_node *n, ito_diff *d, value *out)
{
	if (ito_diff_failed(d)) {
		ito_diff_free(d);
		if (!engine_failed(s, &n->loc))
			report(s, SESSION_INPUT, &n->loc, "cannot evaluate this differential");
		return false;
	}
	out->is_diff = true;
	out->d = *d;
	return true;
}

static bool eval_name(session *s, const ast_node *n, value *out)
{
	const char *name = n->text;
	expr_ctx *ctx = s->ctx;
	if (strcmp(name, "t") == 0)
		return make_scalar(s, n, s->model.time, out);
	if (strcmp(name, "dt") == 0) {
		ito_diff d;
		ito_diff_zero(&d, &s->model);
		d.dt = expr_int(ctx, 1);
		return make_diff(s, n, &d, out);
	}
	model_entry *entry = model_lookup(&s->model, name);
	if (entry) {
		switch (entry->kind) {
		case MODEL_ARG:
			if (entry->pending_state && !s->in_sde) {
				report(s, SESSION_INPUT, &n->loc,
				       "'%s' is used before its SDE (declare d%s = ... first, or param %s)",
				       name, name, name);
				return false;
			}
			return make_scalar(s, n, entry->sym, out);
		case MODEL_PARAM:
		case MODEL_STATE:
		case MODEL_NOISE:
			return make_scalar(s, n, entry->sym, out);
		case MODEL_LET:
			return make_scalar(s, n, entry->value, out);
		case MODEL_FUNC:
			return make_scalar(s, n, declared_args_application(s, entry->sym, NULL), out);
		case MODEL_TIME:
			return make_scalar(s, n, s->model.time, out);
		case MODEL_MEASURE:
			report(s, SESSION_INPUT, &n->loc, "'%s' is a measure, not a value", name);
			return false;
		}
	}
	if (s->measure && name[0] == 'd') {
		/* under Q, dZ is the increment of the Q Brownian motion Z that replaces
		 * W, and dB, for a noise B that Q keeps by name, the increment of B's
		 * Q Brownian motion: the name results under Q print for it, so that a
		 * result reads back as it was meant (d(B) is B's own differential,
		 * shifted when B is correlated with a listed noise) */
		for (size_t k = 0; k < s->measure->nnoises && k < s->model.nnoises; k++) {
			const expr *qname = s->measure->names[k];
			if (strcmp(expr_sym_name(qname), name + 1) == 0) {
				ito_diff d;
				ito_diff_zero(&d, &s->model);
				d.dw[k] = expr_int(ctx, 1);
				return make_diff(s, n, &d, out);
			}
		}
	}
	const expr *process = differential_of(s, name);
	if (process) {
		ito_diff d;
		ito_dynamics(&s->model, s->measure, process, &d);
		return make_diff(s, n, &d, out);
	}
	model_entry *func;
	unsigned char counts[EXPR_MAX_FUNC_ARGS];
	if (parse_partial_name(s, name, &func, counts))
		return make_scalar(s, n, declared_args_application(s, func->sym, counts), out);
	if (name[0] == 'd' && name[1]) {
		model_entry *target = model_lookup(&s->model, name + 1);
		if (target && target->kind == MODEL_LET) {
			report(s, SESSION_INPUT, &n->loc,
			       "'%s' is not a differential name; write d(%s) for the differential of a "
			       "derived process",
			       name, name + 1);
			return false;
		}
	}
	if (s->in_sde && declared_later(s, name)) {
		/* a state whose SDE comes later in the same input (dS uses v
		 * before dv): announced now; queries refuse the model until it
		 * has its SDE */
		if (!check_new_name(s, &n->loc, name, false))
			return false;
		const expr *sym = declared_symbol(s, name, &n->loc);
		if (!sym)
			return false;
		model_entry *ahead = model_add(&s->model, name, MODEL_ARG, sym);
		ahead->pending_state = true;
		return make_scalar(s, n, ahead->sym, out);
	}
	if (s->in_sde)
		undeclared_name(s, &n->loc, name);
	else
		unknown_name(s, &n->loc, name);
	return false;
}

static bool eval_call(session *s, const ast_node *n, value *out)
{
	expr_ctx *ctx = s->ctx;
	const char *name = n->text;
	expr_builtin fn;
	bool is_sqrt = strcmp(name, "sqrt") == 0;
	if (is_sqrt || expr_builtin_lookup(name, &fn)) {
		if (n->nitems != 1) {
			report(s, SESSION_INPUT, &n->loc, "%s takes one argument, not %zu", name, n->nitems);
			return false;
		}
		const expr *arg;
		if (!eval_scalar(s, n->items[0], &arg))
			return false;
		return make_scalar(s, n, is_sqrt ? expr_pow_rat(ctx, arg, 1, 2) : expr_fun(ctx, fn, arg),
		                   out);
	}
	model_entry *entry = model_lookup(&s->model, name);
	unsigned char counts[EXPR_MAX_FUNC_ARGS] = {0};
	if (!entry || entry->kind != MODEL_FUNC) {
		if (!parse_partial_name(s, name, &entry, counts)) {
			if (entry) {
				report(s, SESSION_INPUT, &n->loc, "'%s' is a %s, not a function", name,
				       model_kind_name(entry->kind));
				return false;
			}
			const char *hint = suggest(s, name);
			if (hint)
				report(s, SESSION_INPUT, &n->loc, "unknown function '%s'; did you mean '%s'?",
				       name, hint);
			else
				report(s, SESSION_INPUT, &n->loc,
				       "unknown function '%s' (declare it with: func %s(t, x))", name, name);
			return false;
		}
	}
	size_t nargs = expr_func_arity(entry->sym);
	if (n->nitems != nargs) {
		report(s, SESSION_INPUT, &n->loc, "%s takes %zu argument%s, not %zu", entry->name, nargs,
		       nargs == 1 ? "" : "s", n->nitems);
		return false;
	}
	const expr *args[EXPR_MAX_FUNC_ARGS];
	for (size_t i = 0; i < nargs; i++)
		if (!eval_scalar(s, n->items[i], &args[i]))
			return false;
	return make_scalar(s, n, expr_fapp(ctx, entry->sym, counts, args), out);
}

/* The symbol a name denotes as a variable (t, a parameter, state, noise or
 * function argument); otherwise NULL after a message: an unknown name, or
 * "VERB the KIND 'NAME'TAIL" ("cannot set the function 'f' at a point"). */
const expr *variable_symbol(session *s, const ast_node *n, const char *verb, const char *tail)
{
	if (strcmp(n->text, "t") == 0)
		return s->model.time;
	model_entry *entry = model_lookup(&s->model, n->text);
	if (entry && (entry->kind == MODEL_PARAM || entry->kind == MODEL_STATE ||
	              entry->kind == MODEL_NOISE || entry->kind == MODEL_ARG))
		return entry->sym;
	if (entry)
		report(s, SESSION_INPUT, &n->loc, "%s the %s '%s'%s", verb, model_kind_name(entry->kind),
		       n->text, tail);
	else
		unknown_name(s, &n->loc, n->text);
	return NULL;
}

/* A chain a + b - c + ... (a left spine of ADD/SUB nodes) in a loop, so its
 * length costs no stack; number-valued terms are summed in one n-ary sum. */
static bool eval_sum_chain(session *s, const ast_node *n, value *out)
{
	expr_ctx *ctx = s->ctx;
	size_t count = 0, capacity = 16;
	const ast_node **operands = xmalloc(capacity * sizeof *operands);
	bool *negated = xmalloc(capacity * sizeof *negated);
	const ast_node *node = n;
	while (node->kind == AST_ADD || node->kind == AST_SUB) {
		if (count + 2 > capacity) {
			capacity *= 2;
			operands = xreallocarray(operands, capacity, sizeof *operands);
			negated = xreallocarray(negated, capacity, sizeof *negated);
		}
		operands[count] = node->b;
		negated[count++] = node->kind == AST_SUB;
		node = node->a;
	}
	operands[count] = node;
	negated[count++] = false;
	/* operands are in reverse order: evaluate from the leftmost */
	value *values = xcalloc(count, sizeof *values);
	bool ok = true, any_diff = false, any_scalar = false;
	for (size_t i = count; i-- > 0 && ok;) {
		ok = eval_node(s, operands[i], &values[i]);
		if (ok) {
			any_diff |= values[i].is_diff;
			any_scalar |= !values[i].is_diff;
		}
	}
	if (ok && any_diff && any_scalar) {
		const ast_node *culprit = n;
		for (size_t i = count; i-- > 0;)
			if (!values[i].is_diff) {
				culprit = operands[i];
				break;
			}
		report(s, SESSION_INPUT, &culprit->loc,
		       "cannot add an expression and a differential (each term needs a dt or a noise "
		       "differential)");
		ok = false;
	}
	if (ok && !any_diff) {
		const expr **terms = xmalloc(count * sizeof *terms);
		for (size_t i = 0; i < count; i++)
			terms[i] = negated[i] ? expr_neg(ctx, values[i].e) : values[i].e;
		ok = make_scalar(s, n, expr_add_n(ctx, count, terms), out);
		free(terms);
	} else if (ok) {
		ito_diff sum;
		ito_diff_zero(&sum, &s->model);
		for (size_t i = count; i-- > 0;) {
			ito_diff term, next;
			ito_diff_scale(&s->model, &values[i].d, expr_int(ctx, negated[i] ? -1 : 1), &term);
			ito_diff_add(&s->model, &sum, &term, &next);
			ito_diff_free(&term);
			ito_diff_free(&sum);
			sum = next;
		}
		ok = make_diff(s, n, &sum, out);
	}
	for (size_t i = 0; i < count; i++)
		value_free(&values[i]);
	free(values);
	free(operands);
	free(negated);
	return ok;
}

/* n is an operator node; a and b the values of its operands (consumed). */
static bool combine(session *s, const ast_node *n, value a, value b, value *out)
{
	expr_ctx *ctx = s->ctx;
	model *m = &s->model;
	bool ok = true;
	ito_diff d;
	switch (n->kind) {
	case AST_ADD:
	case AST_SUB:
		if (a.is_diff != b.is_diff) {
			report(s, SESSION_INPUT, &n->loc,
			       "cannot add an expression and a differential (each term needs a dt or a noise "
			       "differential)");
			ok = false;
		} else if (a.is_diff) {
			if (n->kind == AST_SUB) {
				ito_diff neg;
				ito_diff_scale(m, &b.d, expr_int(ctx, -1), &neg);
				ito_diff_add(m, &a.d, &neg, &d);
				ito_diff_free(&neg);
			} else {
				ito_diff_add(m, &a.d, &b.d, &d);
			}
			ok = make_diff(s, n, &d, out);
		} else {
			ok = make_scalar(
			        s, n, n->kind == AST_ADD ? expr_add(ctx, a.e, b.e) : expr_sub(ctx, a.e, b.e),
			        out);
		}
		break;
	case AST_MUL:
		if (a.is_diff && b.is_diff) {
			ito_mul(m, &a.d, &b.d, &d);
			ok = make_diff(s, n, &d, out);
		} else if (a.is_diff || b.is_diff) {
			ito_diff_scale(m, a.is_diff ? &a.d : &b.d, a.is_diff ? b.e : a.e, &d);
			ok = make_diff(s, n, &d, out);
		} else {
			ok = make_scalar(s, n, expr_mul(ctx, a.e, b.e), out);
		}
		break;
	case AST_DIV:
		if (b.is_diff) {
			report(s, SESSION_INPUT, &n->b->loc, "cannot divide by a differential");
			ok = false;
		} else if (expr_is_zero(b.e)) {
			report(s, SESSION_INPUT, &n->b->loc, "division by zero");
			ok = false;
		} else if (a.is_diff) {
			ito_diff_scale(m, &a.d, expr_pow(ctx, b.e, expr_int(ctx, -1)), &d);
			ok = make_diff(s, n, &d, out);
		} else {
			ok = make_scalar(s, n, expr_div(ctx, a.e, b.e), out);
		}
		break;
	case AST_POW:
		if (b.is_diff) {
			report(s, SESSION_INPUT, &n->b->loc, "an exponent cannot be a differential");
			ok = false;
		} else if (a.is_diff) {
			/* (dX)^1 = dX, (dX)^2 by the table, higher powers vanish */
			if (!expr_is_integer(b.e) || mpq_sgn(expr_num_value(b.e)) <= 0) {
				report(s, SESSION_INPUT, &n->b->loc,
				       "a differential can only be raised to a positive integer power");
				ok = false;
			} else if (expr_is_one(b.e)) {
				ito_diff_scale(m, &a.d, expr_int(ctx, 1), &d);
				ok = make_diff(s, n, &d, out);
			} else if (mpz_cmp_ui(mpq_numref(expr_num_value(b.e)), 2) == 0) {
				ito_mul(m, &a.d, &a.d, &d);
				ok = make_diff(s, n, &d, out);
			} else {
				ito_diff_zero(&d, m);
				ok = make_diff(s, n, &d, out);
			}
		} else {
			ok = make_scalar(s, n, expr_pow(ctx, a.e, b.e), out);
		}
		break;
	default:
		ok = false;
	}
	value_free(&a);
	value_free(&b);
	return ok;
}

static bool eval_arith(session *s, const ast_node *n, value *out)
{
	value a = {0}, b = {0};
	if (!eval_node(s, n->a, &a))
		return false;
	if (!eval_node(s, n->b, &b)) {
		value_free(&a);
		return false;
	}
	return combine(s, n, a, b, out);
}

/* A chain a*b/c*... (a left spine of MUL/DIV nodes) folded in a loop. */
static bool eval_product_chain(session *s, const ast_node *n, value *out)
{
	size_t count = 0, capacity = 16;
	const ast_node **ops = xmalloc(capacity * sizeof *ops);
	const ast_node *node = n;
	while (node->kind == AST_MUL || node->kind == AST_DIV) {
		if (count == capacity) {
			capacity *= 2;
			ops = xreallocarray(ops, capacity, sizeof *ops);
		}
		ops[count++] = node;
		node = node->a;
	}
	value acc;
	bool ok = eval_node(s, node, &acc);
	for (size_t i = count; i-- > 0 && ok;) {
		value right, next;
		if (!eval_node(s, ops[i]->b, &right)) {
			value_free(&acc);
			ok = false;
			break;
		}
		ok = combine(s, ops[i], acc, right, &next);
		acc = next;
	}
	free(ops);
	if (ok)
		*out = acc;
	return ok;
}

/* The noise named NOISE in diffusion(EXPR, NOISE): its index among the
 * noises of the current measure; -1 after a message. */
static long query_noise(session *s, const ast_node *n)
{
	const expr *const *names = s->measure ? s->measure->names : s->model.noises;
	if (n->kind == AST_NAME)
		for (size_t k = 0; k < s->model.nnoises; k++)
			if (strcmp(expr_sym_name(names[k]), n->text) == 0)
				return (long)k;
	if (n->kind == AST_NAME && s->measure) {
		model_entry *entry = model_lookup(&s->model, n->text);
		if (entry && entry->kind == MODEL_NOISE) {
			long k = model_noise_index(&s->model, entry->sym);
			report(s, SESSION_INPUT, &n->loc,
			       "under %s the noise %s is replaced by %s; write %s here", s->measure->name,
			       n->text, expr_sym_name(names[k]), expr_sym_name(names[k]));
			return -1;
		}
	}
	if (n->kind == AST_NAME && strcmp(n->text, "t") != 0 && !model_lookup(&s->model, n->text) &&
	    !s->measure) {
		unknown_name(s, &n->loc, n->text);
		return -1;
	}
	char *list = noise_list(s, s->measure, "");
	report(s, SESSION_INPUT, &n->loc,
	       "the second argument of diffusion(...) is a noise name (here%s%s: %s)",
	       s->measure ? " under " : "", s->measure ? s->measure->name : "",
	       *list ? list : "none declared");
	free(list);
	return -1;
}

/* drift(E), generator(E), diffusion(E), diffusion(E, NOISE), qv(A), qv(A, B):
 * the query's value under the current measure, as a value inside an
 * expression (the statement forms print the same values). */
static bool eval_query(session *s, const ast_node *n, value *out)
{
	const char *what = n->text;
	bool is_qv = strcmp(what, "qv") == 0, is_diffusion = strcmp(what, "diffusion") == 0;
	size_t most = is_qv || is_diffusion ? 2 : 1;
	if (n->nitems > most) {
		report(s, SESSION_INPUT, &n->loc, "%s(...) takes %s, not %zu", what,
		       is_qv          ? "one or two expressions"
		       : is_diffusion ? "an expression and optionally a noise"
		                      : "one expression",
		       n->nitems);
		return false;
	}
	const expr *e;
	if (!eval_process(s, n->items[0], &e))
		return false;
	long noise = -1;
	if (is_diffusion && n->nitems == 2 && (noise = query_noise(s, n->items[1])) < 0)
		return false;
	const expr *other = NULL;
	if (is_qv && n->nitems == 2 && !eval_process(s, n->items[1], &other))
		return false;
	ito_diff d;
	ito_d(&s->model, s->measure, e, &d);
	if (differential_failed(s, &d, &n->items[0]->loc))
		return false;
	if (is_diffusion && noise < 0) {
		d.dt = expr_int(s->ctx, 0);
		return make_diff(s, n, &d, out);
	}
	const expr *result = d.dt;
	if (is_diffusion) {
		result = d.dw[noise];
	} else if (is_qv) {
		ito_diff db;
		if (other) {
			ito_d(&s->model, s->measure, other, &db);
			if (differential_failed(s, &db, &n->items[1]->loc)) {
				ito_diff_free(&d);
				return false;
			}
		}
		result = ito_covariation(&s->model, &d, other ? &db : &d);
		if (other)
			ito_diff_free(&db);
	}
	ito_diff_free(&d);
	return make_scalar(s, n, result, out);
}

bool eval_node(session *s, const ast_node *n, value *out)
{
	expr_ctx *ctx = s->ctx;
	memset(out, 0, sizeof *out);
	if (expr_poll_interrupt(ctx)) {
		engine_failed(s, &n->loc);
		return false;
	}
	switch (n->kind) {
	case AST_NUM: {
		const expr *e = expr_decimal(ctx, n->text);
		if (!e) {
			report(s, SESSION_LIMIT, &n->loc,
			       "number '%s' is too large (decimal exponents are limited to %d)", n->text,
			       RAT_MAX_DECIMAL_EXPONENT);
			return false;
		}
		return make_scalar(s, n, e, out);
	}
	case AST_NAME:
		return eval_name(s, n, out);
	case AST_NEG: {
		value a;
		if (!eval_node(s, n->a, &a))
			return false;
		if (!a.is_diff)
			return make_scalar(s, n, expr_neg(ctx, a.e), out);
		ito_diff d;
		ito_diff_scale(&s->model, &a.d, expr_int(ctx, -1), &d);
		value_free(&a);
		return make_diff(s, n, &d, out);
	}
	case AST_ADD:
	case AST_SUB:
		return eval_sum_chain(s, n, out);
	case AST_MUL:
	case AST_DIV:
		return eval_product_chain(s, n, out);
	case AST_POW:
		return eval_arith(s, n, out);
	case AST_CALL:
		return eval_call(s, n, out);
	case AST_PARTIAL: {
		const expr *e;
		if (!eval_scalar(s, n->a, &e))
			return false;
		for (size_t i = 0; i < n->nitems; i++) {
			const expr *x =
			        variable_symbol(s, n->items[i], "cannot differentiate with respect to", "");
			if (!x)
				return false;
			e = diff(ctx, e, x);
		}
		return make_scalar(s, n, e, out);
	}
	case AST_DIFF: {
		const expr *e;
		if (!eval_process(s, n->a, &e))
			return false;
		ito_diff d;
		ito_d(&s->model, s->measure, e, &d);
		return make_diff(s, n, &d, out);
	}
	case AST_QUERY:
		return eval_query(s, n, out);
	default:
		report(s, SESSION_INPUT, &n->loc, "not an expression");
		return false;
	}
}

bool numeric_value(session *s, const ast_node *n, double *out)
{
	const expr *e;
	if (!eval_scalar(s, n, &e))
		return false;
	bool ok;
	*out = eval_at(s->ctx, e, 0, NULL, NULL, &ok);
	if (!ok || !isfinite(*out)) {
		report(s, SESSION_INPUT, &n->loc, "expected a number here");
		return false;
	}
	return true;
}
