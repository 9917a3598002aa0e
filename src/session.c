/* session.c - statements in, results out.
 *
 * The parser gives a syntax tree with positions; this module resolves names
 * against the model, evaluates expressions (numbers and differentials), calls
 * the engine and writes each result in the session's format.  Every error is
 * reported with its position and leaves the session as it was before the
 * statement.
 */
#include "session.h"

#include <ctype.h>
#include <math.h>
#include <stdarg.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include "ast.h"
#include "crosscheck.h"
#include "diff.h"
#include "eval.h"
#include "expr.h"
#include "help.h"
#include "ito.h"
#include "model.h"
#include "print.h"
#include "rat.h"
#include "sim.h"
#include "simp.h"
#include "verify.h"
#include "writer.h"
#include "xalloc.h"

enum { MAX_NESTING = 1000, MAX_LINE = 1 << 20 };

struct session {
	session_options opt;
	expr_ctx *ctx;
	model model;
	session_format format;
	int status;
	bool quit;
	/* the source being run, for error lines */
	const char *source;
	size_t length;
	const char *origin;
	const model_measure *measure; /* the measure of the current query */
	int load_depth;
	unsigned long claim_count;
	int fixed_line; /* for -e statements: messages say -e:N:COLUMN */
	bool in_sde;	/* evaluating an SDE's right side: assumed states may appear */
	bool abbreviate; /* print let names for their definitions in results */
	bool corr_block;	   /* inside a run of corr statements */
	const expr **corr_before;  /* the matrix before the run */
	size_t corr_before_n;
	ast_loc corr_last;	   /* the last corr of the run, for the message */
	char *corr_text, *corr_origin; /* its line and origin */
	int corr_fixed_line;
	writer *writers[4]; /* one per format, made on first use */
};

/* The source text being run, for the line and caret of messages; a nested
 * run (load, a corr message given later, session_expr) swaps it in and out. */
typedef struct source_frame {
	const char *source;
	size_t length;
	const char *origin;
	int fixed_line;
} source_frame;

static source_frame enter_source(session *s, const char *source, size_t length, const char *origin,
				 int fixed_line)
{
	source_frame outer = {s->source, s->length, s->origin, s->fixed_line};
	s->source = source;
	s->length = length;
	s->origin = origin;
	s->fixed_line = fixed_line;
	return outer;
}

static void leave_source(session *s, source_frame outer)
{
	s->source = outer.source;
	s->length = outer.length;
	s->origin = outer.origin;
	s->fixed_line = outer.fixed_line;
}

/* An evaluated expression: a number-valued expression or a differential. */
typedef struct value {
	bool is_diff;
	const expr *e;
	ito_diff d;
} value;

static void value_free(value *v)
{
	if (v->is_diff)
		ito_diff_free(&v->d);
	v->is_diff = false;
}

/* ------------------------------------------------------------------ errors */

static void raise_status(session *s, int status)
{
	static const int rank[] = {0, 1, 2, 3};
	if (rank[status] > rank[s->status])
		s->status = status;
}

static void source_line(const session *s, int line, const char **start, size_t *length)
{
	const char *p = s->source, *end = s->source + s->length;
	for (int l = 1; l < line && p < end; l++) {
		const char *nl = memchr(p, '\n', (size_t)(end - p));
		p = nl ? nl + 1 : end;
	}
	const char *nl = memchr(p, '\n', (size_t)(end - p));
	*start = p;
	*length = (size_t)((nl ? nl : end) - p);
}

static void report(session *s, int status, const ast_loc *loc, const char *format, ...)
	__attribute__((format(printf, 4, 5)));

static void report(session *s, int status, const ast_loc *loc, const char *format, ...)
{
	va_list args;
	va_start(args, format);
	char message[1024];
	vsnprintf(message, sizeof message, format, args);
	va_end(args);
	raise_status(s, status);
	int line = loc ? loc->first_line : 1, column = loc ? loc->first_column : 1;
	if (s->fixed_line)
		fprintf(s->opt.err, "%s:%d:%d: error: %s\n", s->origin, s->fixed_line, column, message);
	else
		fprintf(s->opt.err, "%s:%d:%d: error: %s\n", s->origin, line, column, message);
	if (s->source && loc) {
		const char *text;
		size_t length;
		source_line(s, line, &text, &length);
		if (length > 200)
			length = 200;
		fprintf(s->opt.err, "  %.*s\n  ", (int)length, text);
		for (int c = 1; c < column && (size_t)c <= length; c++)
			fputc(text[c - 1] == '\t' ? '\t' : ' ', s->opt.err);
		int width = 1;
		if (loc->last_line == loc->first_line && loc->last_column > loc->first_column)
			width = loc->last_column - loc->first_column + 1; /* last_column is inclusive */
		for (int i = 0; i < width && i < 200; i++)
			fputc(i == 0 ? '^' : '~', s->opt.err);
		fputc('\n', s->opt.err);
	}
	if (s->format == FORMAT_JSON) {
		xbuf buf = {0};
		xbuf_printf(&buf, "{\"kind\":\"error\",\"line\":%d,\"column\":%d,\"status\":%d,\"message\":",
			    s->fixed_line ? s->fixed_line : line, column, status);
		prn_json_string(&buf, message);
		xbuf_put(&buf, "}\n");
		fputs(buf.data, s->opt.out);
		xbuf_free(&buf);
	}
}

/* Report an engine error (limit, interrupt, division by zero) if one is set. */
static bool engine_failed(session *s, const ast_loc *loc)
{
	expr_error_kind kind = expr_error(s->ctx);
	if (!kind)
		return false;
	int status = kind == EXPR_ERR_DIVISION ? SESSION_INPUT : SESSION_LIMIT;
	if (kind == EXPR_ERR_INTERRUPTED && s->opt.interrupt && *s->opt.interrupt == 2)
		report(s, SESSION_LIMIT, loc, "time limit exceeded (%g s per statement; see --time-limit)",
		       s->opt.time_limit);
	else if (kind == EXPR_ERR_INTERRUPTED)
		report(s, SESSION_LIMIT, loc, "interrupted");
	else
		report(s, status, loc, "%s", expr_error_message(s->ctx));
	expr_clear_error(s->ctx);
	return true;
}

/* ------------------------------------------------------------------ suggestions */

static size_t edit_distance(const char *a, const char *b)
{
	size_t la = strlen(a), lb = strlen(b);
	if (la > 64 || lb > 64)
		return 99;
	size_t row[65];
	for (size_t j = 0; j <= lb; j++)
		row[j] = j;
	for (size_t i = 1; i <= la; i++) {
		size_t diag = row[0];
		row[0] = i;
		for (size_t j = 1; j <= lb; j++) {
			size_t up = row[j];
			size_t cost = a[i - 1] == b[j - 1] ? 0 : 1;
			size_t best = diag + cost;
			if (row[j] + 1 < best)
				best = row[j] + 1;
			if (row[j - 1] + 1 < best)
				best = row[j - 1] + 1;
			row[j] = best;
			diag = up;
		}
	}
	return row[lb];
}

static void consider(const char *candidate, const char *name, const char **best, size_t *distance)
{
	size_t d = edit_distance(name, candidate);
	if (d < *distance) {
		*distance = d;
		*best = candidate;
	}
}

/* The closest known name, or NULL when nothing is close. */
static const char *suggest(session *s, const char *name)
{
	const char *best = NULL;
	size_t distance = (size_t)-1;
	for (size_t i = 0; i < s->model.nentries; i++)
		consider(s->model.entries[i].name, name, &best, &distance);
	for (int f = 0; f < EXPR_F_COUNT; f++)
		consider(expr_builtin_name((expr_builtin)f), name, &best, &distance);
	consider("sqrt", name, &best, &distance);
	consider("t", name, &best, &distance);
	size_t length = strlen(name);
	size_t limit = length <= 2 ? 0 : length <= 4 ? 1 : 2;
	return distance <= limit ? best : NULL;
}

static void unknown_name(session *s, const ast_loc *loc, const char *name)
{
	const char *hint = suggest(s, name);
	if (hint)
		report(s, SESSION_INPUT, loc, "unknown name '%s'; did you mean '%s'?", name, hint);
	else
		report(s, SESSION_INPUT, loc, "unknown name '%s'", name);
}

/* ------------------------------------------------------------------ names */

static bool is_identifier(const char *text)
{
	if (!isalpha((unsigned char)*text))
		return false;
	for (const char *c = text; *c; c++)
		if (!isalnum((unsigned char)*c) && *c != '_')
			return false;
	return true;
}

/* A partial-derivative name f_x, f_tx, f_{x1,x2}: the function and counts. */
static bool parse_partial_name(session *s, const char *name, model_entry **func,
			       unsigned char *counts)
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
				while (k < nargs && !(strlen(expr_func_arg_name(f, k)) == (size_t)(end - p) &&
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
static const expr *differential_of(session *s, const char *name)
{
	if (name[0] != 'd' || !name[1])
		return NULL;
	model_entry *entry = model_lookup(&s->model, name + 1);
	if (entry && (entry->kind == MODEL_STATE || entry->kind == MODEL_NOISE))
		return entry->sym;
	return NULL;
}

/* ------------------------------------------------------------------ evaluation */

static bool eval_node(session *s, const ast_node *n, value *out);
static bool check_new_name(session *s, const ast_loc *loc, const char *name, bool allow_arg);

static bool eval_scalar(session *s, const ast_node *n, const expr **out)
{
	value v = {0};
	if (!eval_node(s, n, &v))
		return false;
	if (v.is_diff) {
		value_free(&v);
		report(s, SESSION_INPUT, &n->loc, "a differential is not allowed here; expected an expression");
		return false;
	}
	*out = v.e;
	return true;
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
				       "'%s' is used before its SDE (declare d%s = ... first, or param %s)", name, name, name);
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
		/* under Q, dZ is the increment of the Q Brownian motion Z that replaces W */
		for (size_t k = 0; k < s->measure->nnoises && k < s->model.nnoises; k++) {
			const expr *qname = s->measure->names[k];
			if (qname != s->model.noises[k] && strcmp(expr_sym_name(qname), name + 1) == 0) {
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
			       "'%s' is not a differential name; write d(%s) for the differential of a derived process",
			       name, name + 1);
			return false;
		}
	}
	if (s->in_sde && is_identifier(name) && !suggest(s, name) && check_new_name(s, &n->loc, name, false)) {
		/* a state whose SDE comes later (dS uses v before dv): announced now,
		 * and every query refuses the model until it gets its SDE */
		model_entry *ahead = model_add(&s->model, name, MODEL_ARG, expr_sym(s->ctx, name));
		ahead->pending_state = true;
		return make_scalar(s, n, ahead->sym, out);
	}
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
		return make_scalar(s, n, is_sqrt ? expr_pow_rat(ctx, arg, 1, 2) : expr_fun(ctx, fn, arg), out);
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
				report(s, SESSION_INPUT, &n->loc, "unknown function '%s'; did you mean '%s'?", name, hint);
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

/* The symbol a name denotes for differentiation (a parameter, state, noise, t, argument). */
static const expr *variable_symbol(session *s, const ast_node *n)
{
	if (strcmp(n->text, "t") == 0)
		return s->model.time;
	model_entry *entry = model_lookup(&s->model, n->text);
	if (entry && (entry->kind == MODEL_PARAM || entry->kind == MODEL_STATE ||
		      entry->kind == MODEL_NOISE || entry->kind == MODEL_ARG))
		return entry->sym;
	if (entry)
		report(s, SESSION_INPUT, &n->loc, "cannot differentiate with respect to the %s '%s'",
		       model_kind_name(entry->kind), n->text);
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
		       "cannot add an expression and a differential (each term needs a dt or a noise differential)");
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
			       "cannot add an expression and a differential (each term needs a dt or a noise differential)");
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
			ok = make_scalar(s, n, n->kind == AST_ADD ? expr_add(ctx, a.e, b.e) : expr_sub(ctx, a.e, b.e), out);
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
				report(s, SESSION_INPUT, &n->b->loc, "a differential can only be raised to a positive integer power");
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

static bool eval_node(session *s, const ast_node *n, value *out)
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
			report(s, SESSION_LIMIT, &n->loc, "number '%s' is too large (decimal exponents are limited to %d)",
			       n->text, RAT_MAX_DECIMAL_EXPONENT);
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
			const expr *x = variable_symbol(s, n->items[i]);
			if (!x)
				return false;
			e = diff(ctx, e, x);
		}
		return make_scalar(s, n, e, out);
	}
	case AST_DIFF: {
		const expr *e;
		if (!eval_scalar(s, n->a, &e))
			return false;
		ito_diff d;
		ito_d(&s->model, s->measure, e, &d);
		return make_diff(s, n, &d, out);
	}
	default:
		report(s, SESSION_INPUT, &n->loc, "not an expression");
		return false;
	}
}

/* ------------------------------------------------------------------ output */

/* Every result goes to the writer of the current format (writer.h) as a
 * result value; the format is decided there and nowhere else. */

static writer *current_writer(session *s)
{
	static const writer_class *const classes[] = {&writer_text, &writer_latex, &writer_c, &writer_json};
	if (!s->writers[s->format])
		s->writers[s->format] = writer_new(classes[s->format], s->opt.out, s->ctx, &s->model,
						   s->opt.standalone && s->format == FORMAT_LATEX);
	return s->writers[s->format];
}

/* Plain text of an expression, every let spelled out (show, save, messages). */
static char *text_expr(session *s, const expr *e)
{
	return prn_expr(s->ctx, e, PRN_TEXT);
}

static char *node_text(session *s, const ast_node *n);

/* A result being made: the place and measure of the statement, and the let
 * names that may abbreviate its subexpressions. */
typedef struct pending {
	stmt_result r;
	prn_abbrev abbrev;
	const expr **nodes;
	const char **names;
	bool *used;
	char *statement;
} pending;

static void result_start(session *s, pending *p, result_kind kind, const ast_node *st)
{
	memset(p, 0, sizeof *p);
	model *m = &s->model;
	p->r.kind = kind;
	p->r.origin = s->origin;
	p->r.line = s->fixed_line ? s->fixed_line : st->loc.first_line;
	p->statement = node_text(s, st);
	p->r.statement = p->statement;
	p->r.measure = s->measure ? s->measure->name : NULL;
	p->r.diff.noises = s->measure ? s->measure->names : m->noises;
	if (!s->abbreviate || m->nentries == 0)
		return;
	p->nodes = xmalloc(m->nentries * sizeof *p->nodes);
	p->names = xmalloc(m->nentries * sizeof *p->names);
	p->used = xcalloc(m->nentries, sizeof *p->used);
	size_t n = 0;
	for (size_t i = 0; i < m->nentries; i++) {
		model_entry *entry = &m->entries[i];
		if (entry->kind != MODEL_LET || !entry->value)
			continue;
		expr_kind kind_of = expr_kind_of(entry->value);
		if (kind_of == EXPR_NUM || kind_of == EXPR_SYM)
			continue;
		p->nodes[n] = entry->value;
		p->names[n] = entry->name;
		n++;
	}
	p->abbrev = (prn_abbrev){.n = n, .nodes = p->nodes, .names = p->names, .used = p->used};
	if (n)
		p->r.abbrev = &p->abbrev;
}

static void result_set_diff(pending *p, const ito_diff *d)
{
	p->r.diff.dt = d->dt;
	p->r.diff.dw = d->dw;
	p->r.diff.n = d->n;
}

/* Hand the result to the writer; a format that cannot write it is an error
 * of the statement. */
static bool result_emit(session *s, pending *p, const ast_node *st)
{
	char *error = NULL;
	bool ok = writer_write(current_writer(s), &p->r, &error);
	if (!ok) {
		report(s, SESSION_INPUT, &st->loc, "%s", error);
		free(error);
	}
	free(p->nodes);
	free(p->names);
	free(p->used);
	free(p->statement);
	return ok;
}

/* A differential result: d EXPR (of), a differential written out or a product. */
static bool output_differential(session *s, const ast_node *st, result_kind kind, const expr *of, const ito_diff *d)
{
	pending p;
	result_start(s, &p, kind, st);
	p.r.of = of;
	p.r.value = d->dt;
	result_set_diff(&p, d);
	return result_emit(s, &p, st);
}

/* A single expression result: value, drift, generator, qv. */
static bool output_scalar(session *s, const ast_node *st, result_kind kind, const expr *of, const expr *of2,
			  const expr *e)
{
	pending p;
	result_start(s, &p, kind, st);
	p.r.of = of;
	p.r.of2 = of2;
	p.r.value = e;
	return result_emit(s, &p, st);
}

/* The source text of a node, for C comments. */
static char *node_text(session *s, const ast_node *n)
{
	if (!s->source || n->loc.first_line != n->loc.last_line)
		return xstrdup("query");
	const char *line;
	size_t length;
	source_line(s, n->loc.first_line, &line, &length);
	size_t from = (size_t)(n->loc.first_column - 1), to = (size_t)n->loc.last_column;
	if (to > length)
		to = length;
	if (from >= to)
		return xstrdup("query");
	char *text = xstrndup(line + from, to - from);
	for (char *c = text; *c; c++)
		if (*c == '*' && c[1] == '/')
			c[1] = ' ';
	return text;
}

/* ------------------------------------------------------------------ declarations */

static bool check_new_name(session *s, const ast_loc *loc, const char *name, bool allow_arg)
{
	if (strcmp(name, "t") == 0 || strcmp(name, "dt") == 0) {
		report(s, SESSION_INPUT, loc, "'%s' is reserved (time and its differential)", name);
		return false;
	}
	model_entry *entry = model_lookup(&s->model, name);
	if (entry && !(allow_arg && entry->kind == MODEL_ARG)) {
		report(s, SESSION_INPUT, loc, "'%s' is already declared as a %s", name, model_kind_name(entry->kind));
		return false;
	}
	/* dW beside a noise W (or a state W) would be ambiguous */
	if (name[0] == 'd' && name[1]) {
		model_entry *base = model_lookup(&s->model, name + 1);
		if (base && (base->kind == MODEL_NOISE || base->kind == MODEL_STATE)) {
			report(s, SESSION_INPUT, loc, "'%s' would be ambiguous: it is the differential of the %s '%s'",
			       name, model_kind_name(base->kind), name + 1);
			return false;
		}
	}
	char *dname = xasprintf("d%s", name);
	model_entry *clash = model_lookup(&s->model, dname);
	free(dname);
	if (clash) {
		report(s, SESSION_INPUT, loc, "'%s' would make the name 'd%s' (a %s) ambiguous", name, name,
		       model_kind_name(clash->kind));
		return false;
	}
	return true;
}

static int sign_from_bound(const expr *bound, ast_rel op)
{
	if (!expr_is_num(bound))
		return EXPR_SIGN_UNKNOWN;
	int sgn = mpq_sgn(expr_num_value(bound));
	switch (op) {
	case REL_GT:
		return sgn >= 0 ? EXPR_SIGN_POS : EXPR_SIGN_UNKNOWN;
	case REL_GE:
		return sgn > 0 ? EXPR_SIGN_POS : sgn == 0 ? EXPR_SIGN_NONNEG : EXPR_SIGN_UNKNOWN;
	case REL_LT:
		return sgn <= 0 ? EXPR_SIGN_NEG : EXPR_SIGN_UNKNOWN;
	case REL_LE:
		return sgn < 0 ? EXPR_SIGN_NEG : sgn == 0 ? EXPR_SIGN_NONPOS : EXPR_SIGN_UNKNOWN;
	default:
		return EXPR_SIGN_UNKNOWN;
	}
}

/* Apply a COND (x > 0, x in [a, b]) to the entry's range and the symbol's sign. */
static bool apply_condition(session *s, model_entry *entry, const ast_node *cond)
{
	if (cond->op == REL_NONE)
		return true;
	const expr *lo = NULL, *hi = NULL;
	int sign = EXPR_SIGN_UNKNOWN;
	if (cond->op == REL_IN) {
		if (!eval_scalar(s, cond->a->a, &lo) || !eval_scalar(s, cond->a->b, &hi))
			return false;
		if (expr_is_num(lo) && expr_is_num(hi) && mpq_cmp(expr_num_value(lo), expr_num_value(hi)) > 0) {
			report(s, SESSION_INPUT, &cond->a->loc, "empty range: the lower bound is above the upper bound");
			return false;
		}
		if (expr_is_num(lo) && mpq_sgn(expr_num_value(lo)) > 0)
			sign = EXPR_SIGN_POS;
		else if (expr_is_num(lo) && mpq_sgn(expr_num_value(lo)) == 0)
			sign = EXPR_SIGN_NONNEG;
		else if (expr_is_num(hi) && mpq_sgn(expr_num_value(hi)) < 0)
			sign = EXPR_SIGN_NEG;
		else if (expr_is_num(hi) && mpq_sgn(expr_num_value(hi)) == 0)
			sign = EXPR_SIGN_NONPOS;
		entry->lo = lo;
		entry->hi = hi;
		entry->lo_strict = entry->hi_strict = false;
	} else {
		const expr *bound;
		if (!eval_scalar(s, cond->a, &bound))
			return false;
		sign = sign_from_bound(bound, cond->op);
		if (cond->op == REL_GT || cond->op == REL_GE) {
			entry->lo = bound;
			entry->lo_strict = cond->op == REL_GT;
		} else {
			entry->hi = bound;
			entry->hi_strict = cond->op == REL_LT;
		}
	}
	if (sign != EXPR_SIGN_UNKNOWN) {
		int old = expr_sym_sign(entry->sym);
		int combined = old & sign;
		expr_sym_set_sign(s->ctx, entry->sym, combined ? combined : sign);
	}
	return true;
}

static bool run_param(session *s, const ast_node *st)
{
	for (size_t i = 0; i < st->nitems; i++) {
		model_entry *entry = model_lookup(&s->model, st->items[i]->text);
		if (entry && entry->kind == MODEL_PARAM)
			continue; /* declaring a parameter again (load after save) only updates its range */
		if (!check_new_name(s, &st->items[i]->loc, st->items[i]->text, true))
			return false;
	}
	for (size_t i = 0; i < st->nitems; i++) {
		const ast_node *cond = st->items[i];
		const expr *sym = expr_sym(s->ctx, cond->text);
		model_entry *entry = model_add(&s->model, cond->text, MODEL_PARAM, sym);
		entry->pending_state = false;
		expr_sym_set_rank(s->ctx, sym, PRN_RANK_PARAM);
		if (!apply_condition(s, entry, cond))
			return false;
	}
	return true;
}

static bool run_assume(session *s, const ast_node *st)
{
	for (size_t i = 0; i < st->nitems; i++) {
		const ast_node *cond = st->items[i];
		model_entry *entry = model_lookup(&s->model, cond->text);
		if (entry && entry->kind != MODEL_PARAM && entry->kind != MODEL_STATE &&
		    entry->kind != MODEL_ARG) {
			report(s, SESSION_INPUT, &cond->loc, "cannot assume anything about the %s '%s'",
			       model_kind_name(entry->kind), cond->text);
			return false;
		}
		if (!entry) {
			/* an assumption about a state declared later: keep it as an argument-like name */
			if (!check_new_name(s, &cond->loc, cond->text, false))
				return false;
			entry = model_add(&s->model, cond->text, MODEL_ARG, expr_sym(s->ctx, cond->text));
			entry->pending_state = true;
		}
		if (!apply_condition(s, entry, cond))
			return false;
	}
	return true;
}

static bool run_noise(session *s, const ast_node *st)
{
	for (size_t i = 0; i < st->nitems; i++) {
		model_entry *entry = model_lookup(&s->model, st->items[i]->text);
		if (entry && entry->kind == MODEL_NOISE)
			continue; /* the same noise again: nothing to do */
		if (!check_new_name(s, &st->items[i]->loc, st->items[i]->text, false))
			return false;
	}
	for (size_t i = 0; i < st->nitems; i++) {
		model_entry *entry = model_lookup(&s->model, st->items[i]->text);
		if (entry && entry->kind == MODEL_NOISE)
			continue;
		const expr *sym = expr_sym(s->ctx, st->items[i]->text);
		model_add(&s->model, st->items[i]->text, MODEL_NOISE, sym);
		expr_sym_set_rank(s->ctx, sym, PRN_RANK_NOISE);
		model_add_noise(&s->model, sym);
	}
	return true;
}

/* Is the numeric correlation matrix positive semi-definite (a Cholesky factor exists)? */
static bool numeric_psd(const model *m)
{
	size_t n = m->nnoises;
	for (size_t i = 0; i < n * n; i++)
		if (m->corr[i] && !expr_is_num(m->corr[i]))
			return true; /* symbolic entries: decided later, at sampled points */
	double *c = xcalloc(n * n + 1, sizeof *c);
	double *l = xcalloc(n * n + 1, sizeof *l);
	for (size_t i = 0; i < n; i++)
		for (size_t j = 0; j < n; j++)
			c[i * n + j] = rat_to_double(expr_num_value(model_corr(m, i, j)));
	bool ok = sim_cholesky(n, c, l);
	free(c);
	free(l);
	return ok;
}

static bool run_corr(session *s, const ast_node *st)
{
	model *m = &s->model;
	long idx[2];
	const ast_node *names[2] = {st->a, st->b};
	for (int i = 0; i < 2; i++) {
		model_entry *entry = model_lookup(m, names[i]->text);
		if (!entry || entry->kind != MODEL_NOISE) {
			if (entry)
				report(s, SESSION_INPUT, &names[i]->loc, "'%s' is a %s, not a noise", names[i]->text,
				       model_kind_name(entry->kind));
			else
				unknown_name(s, &names[i]->loc, names[i]->text);
			return false;
		}
		idx[i] = model_noise_index(m, entry->sym);
	}
	if (idx[0] == idx[1]) {
		report(s, SESSION_INPUT, &st->loc, "a noise is perfectly correlated with itself; name two different noises");
		return false;
	}
	const expr *rho;
	if (!eval_scalar(s, st->c, &rho))
		return false;
	if (expr_is_num(rho) && mpz_cmpabs(mpq_numref(expr_num_value(rho)), mpq_denref(expr_num_value(rho))) > 0) {
		report(s, SESSION_INPUT, &st->c->loc, "a correlation must lie in [-1, 1]");
		return false;
	}
	/* a run of corr statements is judged as a whole, at its end: with three
	 * noises correlated 0.9 pairwise, the matrix after the second line (the
	 * third pair still 0) is not positive semi-definite, the final one is */
	if (!s->corr_block) {
		s->corr_block = true;
		size_t cells = m->nnoises * m->nnoises;
		free(s->corr_before);
		s->corr_before = xmalloc((cells ? cells : 1) * sizeof *s->corr_before);
		memcpy(s->corr_before, m->corr, cells * sizeof *s->corr_before);
		s->corr_before_n = m->nnoises;
	}
	/* keep the line, for a message given after this source is gone (REPL) */
	const char *line;
	size_t length;
	source_line(s, st->loc.first_line, &line, &length);
	free(s->corr_text);
	free(s->corr_origin);
	s->corr_text = xstrndup(line, length);
	s->corr_origin = xstrdup(s->origin);
	s->corr_fixed_line = s->fixed_line ? s->fixed_line : st->loc.first_line;
	s->corr_last = st->loc;
	s->corr_last.first_line = s->corr_last.last_line = 1;
	model_set_corr(m, (size_t)idx[0], (size_t)idx[1], rho);
	return true;
}

/* The end of a run of corr statements: the whole matrix must be positive
 * semi-definite (numeric entries); otherwise the run is undone. */
static bool close_corr_block(session *s)
{
	if (!s->corr_block)
		return true;
	s->corr_block = false;
	model *m = &s->model;
	if (numeric_psd(m))
		return true;
	if (s->corr_before_n == m->nnoises)
		memcpy(m->corr, s->corr_before, m->nnoises * m->nnoises * sizeof *m->corr);
	source_frame outer = enter_source(s, s->corr_text, strlen(s->corr_text), s->corr_origin, s->corr_fixed_line);
	report(s, SESSION_INPUT, &s->corr_last, "the correlation matrix would not be positive semi-definite");
	leave_source(s, outer);
	return false;
}

int session_finish(session *s)
{
	close_corr_block(s);
	for (int i = 0; i < 4; i++)
		writer_finish(s->writers[i]);
	return s->status;
}

static bool same_function(const model_entry *entry, const ast_node *st)
{
	if (!entry || entry->kind != MODEL_FUNC || expr_func_arity(entry->sym) != st->nitems)
		return false;
	for (size_t i = 0; i < st->nitems; i++)
		if (strcmp(expr_func_arg_name(entry->sym, i), st->items[i]->text) != 0)
			return false;
	return true;
}

static bool run_func(session *s, const ast_node *st)
{
	if (same_function(model_lookup(&s->model, st->text), st))
		return true; /* the same declaration again */
	if (!check_new_name(s, &st->loc, st->text, false))
		return false;
	if (st->nitems > EXPR_MAX_FUNC_ARGS) {
		report(s, SESSION_INPUT, &st->loc, "a function may have at most %d arguments", EXPR_MAX_FUNC_ARGS);
		return false;
	}
	const char *names[EXPR_MAX_FUNC_ARGS];
	for (size_t i = 0; i < st->nitems; i++) {
		names[i] = st->items[i]->text;
		for (size_t j = 0; j < i; j++)
			if (strcmp(names[i], names[j]) == 0) {
				report(s, SESSION_INPUT, &st->items[i]->loc, "argument '%s' is repeated", names[i]);
				return false;
			}
		model_entry *entry = model_lookup(&s->model, names[i]);
		if (entry && (entry->kind == MODEL_FUNC || entry->kind == MODEL_LET || entry->kind == MODEL_MEASURE)) {
			report(s, SESSION_INPUT, &st->items[i]->loc, "argument '%s' is already a %s", names[i],
			       model_kind_name(entry->kind));
			return false;
		}
	}
	const expr *sym = expr_sym(s->ctx, st->text);
	expr_func_declare(s->ctx, sym, st->nitems, names);
	model_add(&s->model, st->text, MODEL_FUNC, sym);
	for (size_t i = 0; i < st->nitems; i++)
		if (strcmp(names[i], "t") != 0 && !model_lookup(&s->model, names[i])) {
			const expr *arg = expr_sym(s->ctx, names[i]);
			model_add(&s->model, names[i], MODEL_ARG, arg);
		}
	return true;
}

static bool run_let(session *s, const ast_node *st)
{
	model_entry *entry = model_lookup(&s->model, st->text);
	if (entry && entry->kind != MODEL_LET && !(entry->kind == MODEL_ARG && !entry->pending_state)) {
		report(s, SESSION_INPUT, &st->loc, "'%s' is already declared as a %s", st->text,
		       model_kind_name(entry->kind));
		return false;
	}
	if (!entry && !check_new_name(s, &st->loc, st->text, false))
		return false;
	/* a let may not refer to itself */
	const char *name = st->text;
	const ast_node *stack[256];
	size_t top = 0;
	stack[top++] = st->a;
	while (top) {
		const ast_node *n = stack[--top];
		if (!n)
			continue;
		if ((n->kind == AST_NAME || n->kind == AST_CALL) && strcmp(n->text, name) == 0) {
			report(s, SESSION_INPUT, &n->loc, "circular definition: '%s' refers to itself", name);
			return false;
		}
		if (top + 3 + n->nitems < 256) {
			stack[top++] = n->a;
			stack[top++] = n->b;
			stack[top++] = n->c;
			for (size_t i = 0; i < n->nitems; i++)
				stack[top++] = n->items[i];
		}
	}
	const expr *value_expr;
	if (!eval_scalar(s, st->a, &value_expr))
		return false;
	entry = model_add(&s->model, st->text, MODEL_LET, NULL);
	entry->value = value_expr;
	return true;
}

/* An SDE's right side must be a sum of coefficient*dt and coefficient*dNOISE. */
static bool check_sde_term(session *s, const ast_node *term)
{
	/* count the differential factors in a product */
	const ast_node *stack[512];
	size_t top = 0, found = 0;
	bool bad = false;
	const char *why = NULL;
	stack[top++] = term;
	while (top && !bad) {
		const ast_node *n = stack[--top];
		switch (n->kind) {
		case AST_MUL:
			if (top + 2 < 512) {
				stack[top++] = n->a;
				stack[top++] = n->b;
			}
			break;
		case AST_DIV:
			stack[top++] = n->a;
			if (n->b->kind == AST_NAME && (strcmp(n->b->text, "dt") == 0 || differential_of(s, n->b->text)))
				bad = true, why = "a differential cannot be a divisor";
			break;
		case AST_NEG:
			stack[top++] = n->a;
			break;
		case AST_NAME:
			if (strcmp(n->text, "dt") == 0) {
				found++;
			} else {
				const expr *p = differential_of(s, n->text);
				if (p) {
					if (model_noise_index(&s->model, p) < 0)
						bad = true, why = "a state differential cannot drive an SDE; use the noises";
					found++;
				}
			}
			break;
		case AST_POW:
			if (n->a->kind == AST_NAME && (strcmp(n->a->text, "dt") == 0 || differential_of(s, n->a->text)))
				bad = true, why = "powers of differentials vanish or are dt; write the dt term";
			break;
		case AST_DIFF:
			bad = true, why = "d(...) cannot appear in an SDE; use dt and the noises";
			break;
		default:
			break;
		}
	}
	if (!bad && found != 1)
		why = found == 0 ? "this term has no dt or noise differential"
				 : "this term multiplies two differentials";
	if (why) {
		report(s, SESSION_INPUT, &term->loc, "the right side of an SDE must be a sum of coefficient*dt and coefficient*dNOISE terms: %s", why);
		return false;
	}
	return true;
}

static bool check_sde_terms(session *s, const ast_node *n)
{
	/* walk the left spine in a loop: an SDE may have many terms */
	while (n->kind == AST_ADD || n->kind == AST_SUB || (n->kind == AST_NEG && (n->a->kind == AST_ADD || n->a->kind == AST_SUB))) {
		if (n->kind == AST_NEG) {
			n = n->a;
			continue;
		}
		if (!check_sde_terms(s, n->b))
			return false;
		n = n->a;
	}
	return check_sde_term(s, n);
}

static bool run_sde(session *s, const ast_node *st, bool stratonovich)
{
	model *m = &s->model;
	const char *dname = st->text;
	if (dname[0] != 'd' || !dname[1] || !is_identifier(dname + 1)) {
		report(s, SESSION_INPUT, &st->loc,
		       "'%s = ...' is not a statement: an SDE is written dX = ...*dt + ...*dW, a definition let %s = ...",
		       dname, dname);
		return false;
	}
	const char *name = dname + 1;
	model_entry *entry = model_lookup(m, name);
	if (entry && entry->kind != MODEL_ARG && entry->kind != MODEL_STATE) {
		report(s, SESSION_INPUT, &st->loc, "'%s' is a %s; an SDE declares a new state", name,
		       model_kind_name(entry->kind));
		return false;
	}
	if (entry && entry->kind == MODEL_STATE) {
		/* the same SDE again (load after save) is allowed; another one is not */
		model_sde *existing = model_sde_of(m, entry->sym);
		value again;
		s->in_sde = true;
		bool evaluated = existing && eval_node(s, st->a, &again);
		s->in_sde = false;
		bool same = evaluated && again.is_diff && existing->stratonovich == stratonovich &&
			    again.d.dt == existing->drift;
		for (size_t k = 0; same && k < m->nnoises; k++)
			same = again.d.dw[k] == (k < existing->ndiffusion ? existing->diffusion[k] : NULL);
		if (evaluated)
			value_free(&again);
		if (same)
			return true;
		report(s, SESSION_INPUT, &st->loc, "the state '%s' already has an SDE", name);
		return false;
	}
	if (!entry && !check_new_name(s, &st->loc, name, false))
		return false;
	if (!check_sde_terms(s, st->a))
		return false;
	/* declare the state first so its own SDE may use it */
	const expr *sym = expr_sym(s->ctx, name);
	model_entry saved = entry ? *entry : (model_entry){0};
	bool existed = entry != NULL;
	entry = model_add(m, name, MODEL_STATE, sym);
	entry->pending_state = false;
	expr_sym_set_rank(s->ctx, sym, PRN_RANK_STATE);
	value v;
	model_sde *sde = model_add_sde(m, sym);
	sde->stratonovich = stratonovich;
	s->in_sde = true;
	bool evaluated = eval_node(s, st->a, &v);
	s->in_sde = false;
	if (!evaluated || !v.is_diff) {
		if (!v.is_diff && v.e)
			report(s, SESSION_INPUT, &st->a->loc, "the right side of an SDE must contain dt or a noise differential");
		model_remove_sde(m, sym);
		entry = model_lookup(m, name);
		if (existed) {
			entry->kind = saved.kind;
		} else {
			/* forget the name again */
			entry->kind = MODEL_ARG;
			model_forget(m, entry);
		}
		expr_sym_set_rank(s->ctx, sym, PRN_RANK_PARAM);
		return false;
	}
	sde = model_sde_of(m, sym);
	sde->drift = v.d.dt;
	for (size_t k = 0; k < m->nnoises; k++)
		sde->diffusion[k] = v.d.dw[k];
	value_free(&v);
	return true;
}

/* dW = dZ - lambda*dt: find the new noise name and the dt coefficient. */
static bool run_measure(session *s, const ast_node *st)
{
	model *m = &s->model;
	model_entry *existing = model_lookup(m, st->text);
	if (existing && existing->kind != MODEL_MEASURE) {
		report(s, SESSION_INPUT, &st->loc, "'%s' is already declared as a %s", st->text,
		       model_kind_name(existing->kind));
		return false;
	}
	if (!existing && !check_new_name(s, &st->loc, st->text, false))
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
			report(s, SESSION_INPUT, &as->loc, "'%s' is not the differential of a declared noise", as->text);
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
			       "expected dNEW + (shift)*dt, the differential of the new noise plus a drift term");
			ok = false;
			break;
		}
		const char *zname = newname->text + 1;
		model_entry *clash = model_lookup(m, zname);
		if (clash && !(clash->kind == MODEL_NOISE && clash->sym == w)) {
			report(s, SESSION_INPUT, &newname->loc, "'%s' is already declared as a %s; name the new noise differently",
			       zname, model_kind_name(clash->kind));
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
				report(s, SESSION_INPUT, &rest->loc, "the shift of a noise must be a coefficient times dt");
				ok = false;
				break;
			}
			theta = rest_negated ? expr_neg(s->ctx, v.d.dt) : v.d.dt;
			value_free(&v);
		}
		listed[k] = true;
		shift[k] = theta;
		names[k] = expr_sym(s->ctx, zname);
		expr_sym_set_rank(s->ctx, names[k], PRN_RANK_NOISE);
	}
	if (ok) {
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
		for (size_t col = 0; col < nl && ok; col++) {
			size_t pivot = col;
			while (pivot < nl && expr_is_zero(a[pivot * (nl + 1) + col]))
				pivot++;
			if (pivot == nl) {
				report(s, SESSION_INPUT, &st->loc, "the listed noises are perfectly correlated; list fewer");
				ok = false;
				break;
			}
			for (size_t j = 0; j <= nl; j++) {
				const expr *t = a[col * (nl + 1) + j];
				a[col * (nl + 1) + j] = a[pivot * (nl + 1) + j];
				a[pivot * (nl + 1) + j] = t;
			}
			const expr *p = a[col * (nl + 1) + col];
			for (size_t j = 0; j <= nl; j++)
				a[col * (nl + 1) + j] = expr_div(s->ctx, a[col * (nl + 1) + j], p);
			for (size_t i = 0; i < nl; i++) {
				if (i == col)
					continue;
				const expr *factor = a[i * (nl + 1) + col];
				if (expr_is_zero(factor))
					continue;
				for (size_t j = 0; j <= nl; j++)
					a[i * (nl + 1) + j] = expr_sub(s->ctx, a[i * (nl + 1) + j],
								       expr_mul(s->ctx, factor, a[col * (nl + 1) + j]));
			}
		}
		for (size_t k = 0; k < n && ok; k++) {
			if (listed[k])
				continue;
			names[k] = m->noises[k];
			expr_vec parts = {0};
			for (size_t i = 0; i < nl; i++)
				expr_vec_push(&parts, expr_mul(s->ctx, model_corr(m, k, L[i]), a[i * (nl + 1) + nl]));
			shift[k] = expr_add_n(s->ctx, parts.n, parts.items);
			expr_vec_free(&parts);
		}
		free(a);
		free(L);
	}
	if (ok && engine_failed(s, &st->loc))
		ok = false;
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
static bool run_state(session *s, const ast_node *st)
{
	model *m = &s->model;
	expr_ctx *ctx = s->ctx;
	const ast_node *where = st->b;
	model_entry *old = model_lookup(m, where->text);
	if (!old || old->kind != MODEL_STATE) {
		if (old)
			report(s, SESSION_INPUT, &where->loc, "'%s' is a %s, not a state", where->text,
			       model_kind_name(old->kind));
		else
			unknown_name(s, &where->loc, where->text);
		return false;
	}
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
	const expr *new_sym = expr_sym(ctx, st->text);
	int keep_sign = expr_sym_sign(new_sym);
	int forward_sign = expr_sign(ctx, forward);
	if (forward_sign != EXPR_SIGN_UNKNOWN)
		expr_sym_set_sign(ctx, new_sym, keep_sign & forward_sign ? keep_sign & forward_sign : forward_sign);
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
	/* the inverse must undo the forward map: forward(inverse(x)) = x */
	const expr *round = expr_subst(ctx, forward, 1, &old_sym, &inverse);
	if (engine_failed(s, &st->loc))
		return false;
	if (round != new_sym) {
		char *text = text_expr(s, round);
		report(s, SESSION_INPUT, &where->a->loc,
		       "the inverse does not undo the new state: substituting it gives %s, not %s%s", text, st->text,
		       expr_sym_sign(new_sym) == EXPR_SIGN_UNKNOWN ? " (an assume on the new state may help)" : "");
		free(text);
		expr_sym_set_sign(ctx, new_sym, keep_sign);
		return false;
	}
	ito_diff d;
	ito_d(m, NULL, forward, &d);
	if (ito_diff_failed(&d)) {
		ito_diff_free(&d);
		engine_failed(s, &st->loc);
		return false;
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
			m->measures[i].shift[k] = expr_subst(ctx, m->measures[i].shift[k], 1, &old_sym, &inverse);
	model_sde *sde = &m->sdes[position];
	sde->state = new_sym;
	sde->stratonovich = false;
	sde->drift = drift;
	for (size_t k = 0; k < m->nnoises; k++)
		sde->diffusion[k] = dw[k];
	free(dw);
	model_entry *x = model_add(m, st->text, MODEL_STATE, new_sym);
	x->pending_state = false;
	int sign = expr_sym_sign(new_sym);
	if (!x->lo && (sign == EXPR_SIGN_POS || sign == EXPR_SIGN_NONNEG)) {
		/* keep the inferred sign as an assumption, so show and save record it */
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

/* ------------------------------------------------------------------ show / save */

static void dump_model_body(session *s, xbuf *out, const char *only);

/* "assume x > 0", "assume x in [a, b]" for an entry that has a range. */
static void dump_assumption(session *s, xbuf *out, const model_entry *e)
{
	char *text;
	if (e->lo && e->hi && !e->lo_strict && !e->hi_strict) {
		char *lo = text_expr(s, e->lo), *hi = text_expr(s, e->hi);
		xbuf_printf(out, "assume %s in [%s, %s]\n", e->name, lo, hi);
		free(lo);
		free(hi);
		return;
	}
	if (e->lo) {
		text = text_expr(s, e->lo);
		xbuf_printf(out, "assume %s %s %s\n", e->name, e->lo_strict ? ">" : ">=", text);
		free(text);
	}
	if (e->hi) {
		text = text_expr(s, e->hi);
		xbuf_printf(out, "assume %s %s %s\n", e->name, e->hi_strict ? "<" : "<=", text);
		free(text);
	}
}

static void dump_model(session *s, xbuf *out, const char *only)
{
	bool keep_abbreviate = s->abbreviate;
	s->abbreviate = false;
	dump_model_body(s, out, only);
	s->abbreviate = keep_abbreviate;
}

static void dump_model_body(session *s, xbuf *out, const char *only)
{
	model *m = &s->model;
	char *text;
	for (size_t i = 0; i < m->nentries; i++) {
		model_entry *e = &m->entries[i];
		if (only && strcmp(e->name, only) != 0)
			continue;
		switch (e->kind) {
		case MODEL_PARAM:
			xbuf_printf(out, "param %s", e->name);
			if (e->lo && e->hi && !e->lo_strict && !e->hi_strict) {
				char *lo = text_expr(s, e->lo), *hi = text_expr(s, e->hi);
				xbuf_printf(out, " in [%s, %s]", lo, hi);
				free(lo);
				free(hi);
			} else if (e->lo && !e->hi) {
				text = text_expr(s, e->lo);
				xbuf_printf(out, " %s %s", e->lo_strict ? ">" : ">=", text);
				free(text);
			} else if (e->hi && !e->lo) {
				text = text_expr(s, e->hi);
				xbuf_printf(out, " %s %s", e->hi_strict ? "<" : "<=", text);
				free(text);
			} else if (e->lo && e->hi) {
				char *lo = text_expr(s, e->lo), *hi = text_expr(s, e->hi);
				xbuf_printf(out, "\nassume %s %s %s, %s %s %s", e->name, e->lo_strict ? ">" : ">=", lo, e->name,
					    e->hi_strict ? "<" : "<=", hi);
				free(lo);
				free(hi);
			}
			xbuf_putc(out, '\n');
			break;
		case MODEL_NOISE:
			xbuf_printf(out, "noise %s\n", e->name);
			break;
		case MODEL_FUNC: {
			xbuf_printf(out, "func %s(", e->name);
			for (size_t k = 0; k < expr_func_arity(e->sym); k++)
				xbuf_printf(out, "%s%s", k ? ", " : "", expr_func_arg_name(e->sym, k));
			xbuf_put(out, ")\n");
			break;
		}
		default:
			break;
		}
	}
	if (!only)
		for (size_t i = 0; i < m->nnoises; i++)
			for (size_t j = i + 1; j < m->nnoises; j++) {
				const expr *rho = model_corr(m, i, j);
				if (expr_is_zero(rho))
					continue;
				text = text_expr(s, rho);
				xbuf_printf(out, "corr(%s, %s) = %s\n", expr_sym_name(m->noises[i]),
					    expr_sym_name(m->noises[j]), text);
				free(text);
			}
	/* assumptions: on states in the order of their SDEs (so the text does not
	 * depend on which declaration first named them), then on names announced
	 * for later */
	for (size_t i = 0; i < m->nsdes; i++) {
		model_entry *e = model_lookup(m, expr_sym_name(m->sdes[i].state));
		if (e && (!only || strcmp(e->name, only) == 0))
			dump_assumption(s, out, e);
	}
	for (size_t i = 0; i < m->nentries; i++) {
		model_entry *e = &m->entries[i];
		if (e->kind == MODEL_ARG && (!only || strcmp(e->name, only) == 0))
			dump_assumption(s, out, e);
	}
	const model_measure *keep_measure = s->measure;
	s->measure = NULL;
	for (size_t i = 0; i < m->nsdes; i++) {
		model_sde *sde = &m->sdes[i];
		if (only && strcmp(expr_sym_name(sde->state), only) != 0)
			continue;
		prn_diff d = {.dt = sde->drift, .dw = sde->diffusion, .noises = m->noises, .n = sde->ndiffusion};
		char *body = prn_differential(s->ctx, &d, PRN_TEXT, NULL);
		xbuf_printf(out, "%sd%s = %s\n", sde->stratonovich ? "stratonovich " : "", expr_sym_name(sde->state), body);
		free(body);
	}
	s->measure = keep_measure;
	for (size_t i = 0; i < m->nentries; i++) {
		model_entry *e = &m->entries[i];
		if (e->kind != MODEL_LET || (only && strcmp(e->name, only) != 0))
			continue;
		text = text_expr(s, e->value);
		xbuf_printf(out, "let %s = %s\n", e->name, text);
		free(text);
	}
	for (size_t i = 0; i < m->nmeasures; i++) {
		model_measure *q = &m->measures[i];
		if (only && strcmp(q->name, only) != 0)
			continue;
		xbuf_printf(out, "measure %s:", q->name);
		bool first = true;
		for (size_t k = 0; k < q->nnoises; k++) {
			if (q->names[k] == m->noises[k])
				continue; /* implied by the correlations */
			text = text_expr(s, q->shift[k]);
			xbuf_printf(out, "%s d%s = d%s + (%s)*dt", first ? "" : ",", expr_sym_name(m->noises[k]),
				    expr_sym_name(q->names[k]), text);
			free(text);
			first = false;
		}
		xbuf_putc(out, '\n');
	}
}

/* ------------------------------------------------------------------ queries */

static bool run_d(session *s, const ast_node *st)
{
	const expr *e;
	if (!eval_scalar(s, st->a, &e))
		return false;
	ito_diff d;
	ito_d(&s->model, s->measure, e, &d);
	if (ito_diff_failed(&d) || engine_failed(s, &st->loc)) {
		ito_diff_free(&d);
		return false;
	}
	bool ok = output_differential(s, st, RESULT_DIFFERENTIAL, e, &d);
	ito_diff_free(&d);
	return ok;
}

static bool run_part(session *s, const ast_node *st)
{
	const expr *e;
	if (!eval_scalar(s, st->a, &e))
		return false;
	ito_diff d;
	ito_d(&s->model, s->measure, e, &d);
	if (ito_diff_failed(&d) || engine_failed(s, &st->loc)) {
		ito_diff_free(&d);
		return false;
	}
	bool ok;
	if (st->kind == AST_S_DIFFUSION) {
		ito_diff only = d;
		only.dt = expr_int(s->ctx, 0);
		ok = output_differential(s, st, RESULT_DIFFUSION, e, &only);
	} else {
		ok = output_scalar(s, st, st->kind == AST_S_DRIFT ? RESULT_DRIFT : RESULT_GENERATOR, e, NULL, d.dt);
	}
	ito_diff_free(&d);
	return ok;
}

static bool run_qv(session *s, const ast_node *st)
{
	const expr *a, *b = NULL;
	if (!eval_scalar(s, st->a, &a))
		return false;
	if (st->b && !eval_scalar(s, st->b, &b))
		return false;
	ito_diff da, db;
	ito_d(&s->model, s->measure, a, &da);
	if (b)
		ito_d(&s->model, s->measure, b, &db);
	const expr *rate = ito_covariation(&s->model, &da, b ? &db : &da);
	ito_diff_free(&da);
	if (b)
		ito_diff_free(&db);
	if (!rate) {
		engine_failed(s, &st->loc);
		return false;
	}
	return output_scalar(s, st, RESULT_QV, a, b, rate);
}

static bool run_pde(session *s, const ast_node *st)
{
	model *m = &s->model;
	model_entry *entry = model_lookup(m, st->text);
	if (entry && entry->kind != MODEL_FUNC) {
		report(s, SESSION_INPUT, &st->loc, "'%s' is a %s; pde needs an unknown function", st->text,
		       model_kind_name(entry->kind));
		return false;
	}
	for (size_t i = 0; i < st->nitems; i++) {
		const ast_node *arg = st->items[i];
		if (arg->kind != AST_NAME) {
			report(s, SESSION_INPUT, &arg->loc, "the arguments of pde are names (t and states)");
			return false;
		}
		if (strcmp(arg->text, "t") == 0)
			continue;
		model_entry *a = model_lookup(m, arg->text);
		if (!a) {
			unknown_name(s, &arg->loc, arg->text);
			return false;
		}
	}
	if (!entry) {
		ast_node fake = *st;
		fake.kind = AST_S_FUNC;
		if (!run_func(s, &fake))
			return false;
		entry = model_lookup(m, st->text);
	} else if (expr_func_arity(entry->sym) != st->nitems) {
		report(s, SESSION_INPUT, &st->loc, "%s was declared with %zu arguments", st->text,
		       expr_func_arity(entry->sym));
		return false;
	}
	const expr *args[EXPR_MAX_FUNC_ARGS];
	for (size_t i = 0; i < st->nitems; i++) {
		value v;
		if (!eval_node(s, st->items[i], &v) || v.is_diff) {
			value_free(&v);
			return false;
		}
		args[i] = v.e;
	}
	const expr *V = expr_fapp(s->ctx, entry->sym, NULL, args);
	const expr *discount = NULL;
	if (st->a && !eval_scalar(s, st->a, &discount))
		return false;
	const expr *lhs = ito_pde(m, s->measure, V, discount);
	if (!lhs || engine_failed(s, &st->loc))
		return false;
	pending p;
	result_start(s, &p, RESULT_PDE, st);
	p.r.name = st->text;
	p.r.value = lhs;
	return result_emit(s, &p, st);
}

/* The SDE of a state in either convention, under the current measure. */
static bool state_sde(session *s, const ast_node *st, model_entry *entry, bool stratonovich, ito_diff *d)
{
	model *m = &s->model;
	model_sde *sde = model_sde_of(m, entry->sym);
	ito_dynamics(m, s->measure, entry->sym, d);
	if (stratonovich && !ito_diff_failed(d)) {
		/* the Stratonovich drift under the measure: shift applies to both conventions alike */
		const expr *shift = expr_sub(s->ctx, d->dt, ito_state_ito_drift(m, sde));
		d->dt = expr_add(s->ctx, ito_state_stratonovich_drift(m, sde), shift);
	}
	if (ito_diff_failed(d) || engine_failed(s, &st->loc)) {
		ito_diff_free(d);
		return false;
	}
	return true;
}

static bool run_sde_display(session *s, const ast_node *st, bool stratonovich)
{
	model_entry *entry = model_lookup(&s->model, st->text);
	if (!entry || entry->kind != MODEL_STATE) {
		if (entry)
			report(s, SESSION_INPUT, &st->loc, "'%s' is a %s, not a state", st->text, model_kind_name(entry->kind));
		else
			unknown_name(s, &st->loc, st->text);
		return false;
	}
	ito_diff d;
	if (!state_sde(s, st, entry, stratonovich, &d))
		return false;
	pending p;
	result_start(s, &p, RESULT_SDE, st);
	p.r.name = st->text;
	result_set_diff(&p, &d);
	p.r.diff.stratonovich = stratonovich;
	bool ok = result_emit(s, &p, st);
	ito_diff_free(&d);
	return ok;
}

static bool run_expr_statement(session *s, const ast_node *st)
{
	value v;
	if (!eval_node(s, st->a, &v))
		return false;
	if (engine_failed(s, &st->loc)) {
		value_free(&v);
		return false;
	}
	bool ok;
	if (!v.is_diff) {
		ok = output_scalar(s, st, RESULT_VALUE, NULL, NULL, v.e);
	} else {
		bool product = true;
		for (size_t k = 0; k < v.d.n; k++)
			product &= expr_is_zero(v.d.dw[k]);
		ok = output_differential(s, st, product ? RESULT_PRODUCT : RESULT_DIFFERENTIAL, NULL, &v.d);
	}
	value_free(&v);
	return ok;
}

static bool run_show(session *s, const ast_node *st)
{
	model *m = &s->model;
	if (st->text && !model_lookup(m, st->text)) {
		unknown_name(s, &st->loc, st->text);
		return false;
	}
	xbuf script = {0};
	dump_model(s, &script, st->text);
	/* the states' SDEs as they were declared, for the formats that list them */
	stmt_result *sdes = xcalloc(m->nsdes + 1, sizeof *sdes);
	ito_diff *diffs = xcalloc(m->nsdes + 1, sizeof *diffs);
	size_t n = 0;
	bool ok = true;
	for (size_t i = 0; i < m->nsdes && ok; i++) {
		model_sde *sde = &m->sdes[i];
		if (st->text && strcmp(expr_sym_name(sde->state), st->text) != 0)
			continue;
		model_entry *entry = model_lookup(m, expr_sym_name(sde->state));
		if (!state_sde(s, st, entry, sde->stratonovich, &diffs[n])) {
			ok = false;
			break;
		}
		stmt_result *r = &sdes[n];
		r->kind = RESULT_SDE;
		r->origin = s->origin;
		r->line = s->fixed_line ? s->fixed_line : st->loc.first_line;
		r->name = entry->name;
		r->diff = (prn_diff){.dt = diffs[n].dt, .dw = diffs[n].dw, .n = diffs[n].n,
				     .noises = s->measure ? s->measure->names : m->noises,
				     .stratonovich = sde->stratonovich};
		r->measure = s->measure ? s->measure->name : NULL;
		n++;
	}
	if (ok) {
		pending p;
		result_start(s, &p, RESULT_MODEL, st);
		p.r.script = script.data;
		p.r.sdes = sdes;
		p.r.nsdes = n;
		for (size_t i = 0; i < n; i++)
			sdes[i].statement = p.r.statement;
		ok = result_emit(s, &p, st);
	}
	for (size_t i = 0; i < n; i++)
		ito_diff_free(&diffs[i]);
	free(diffs);
	free(sdes);
	xbuf_free(&script);
	return ok;
}

static bool run_save(session *s, const ast_node *st)
{
	if (s->opt.no_files) {
		report(s, SESSION_INPUT, &st->loc, "save is disabled in this session");
		return false;
	}
	FILE *file = fopen(st->text, "w");
	if (!file) {
		report(s, SESSION_INPUT, &st->loc, "cannot write '%s'", st->text);
		return false;
	}
	xbuf buf = {0};
	dump_model(s, &buf, NULL);
	static const char *const format_names[] = {"text", "latex", "c", "json"};
	fprintf(file, "# itox session saved as a script\n%s", buf.data ? buf.data : "");
	if (s->format != FORMAT_TEXT)
		fprintf(file, "format %s\n", format_names[s->format]);
	bool ok = fclose(file) == 0;
	xbuf_free(&buf);
	if (!ok)
		report(s, SESSION_INPUT, &st->loc, "cannot write '%s'", st->text);
	return ok;
}

static bool run_format(session *s, const ast_node *st)
{
	static const char *const names[] = {"text", "latex", "c", "json"};
	for (int i = 0; i < 4; i++)
		if (strcmp(st->text, names[i]) == 0) {
			s->format = (session_format)i;
			return true;
		}
	report(s, SESSION_INPUT, &st->loc, "unknown format '%s' (text, latex, c or json)", st->text);
	return false;
}

static bool run_help(session *s, const ast_node *st)
{
	const char *text = help_text(st->text);
	if (!text) {
		report(s, SESSION_INPUT, &st->loc, "no help on '%s'; try 'help' for the list of topics", st->text);
		return false;
	}
	fputs(text, s->opt.out);
	fflush(s->opt.out);
	return true;
}

static bool run_statement(session *s, const ast_node *st);

static bool run_under(session *s, const ast_node *st)
{
	model_measure *q = model_measure_find(&s->model, st->text);
	if (!q) {
		model_entry *entry = model_lookup(&s->model, st->text);
		if (entry)
			report(s, SESSION_INPUT, &st->loc, "'%s' is a %s, not a measure", st->text, model_kind_name(entry->kind));
		else if (strcmp(st->text, "P") == 0)
			return run_statement(s, st->a);
		else
			report(s, SESSION_INPUT, &st->loc, "unknown measure '%s' (declare it with: measure %s: dW = dZ - lambda*dt)",
			       st->text, st->text);
		return false;
	}
	const model_measure *keep = s->measure;
	s->measure = q;
	bool ok = run_statement(s, st->a);
	s->measure = keep;
	return ok;
}

static bool run_claim(session *s, const ast_node *st);
static bool run_check(session *s, const ast_node *st);

/* Queries need every state that an SDE uses to have its own SDE. */
static bool model_complete(session *s, const ast_node *st)
{
	model *m = &s->model;
	for (size_t i = 0; i < m->nentries; i++) {
		model_entry *e = &m->entries[i];
		if (e->kind != MODEL_ARG || !e->pending_state)
			continue;
		for (size_t j = 0; j < m->nsdes; j++) {
			model_sde *sde = &m->sdes[j];
			bool uses = expr_has(s->ctx, sde->drift, e->sym);
			for (size_t k = 0; k < sde->ndiffusion && !uses; k++)
				uses = expr_has(s->ctx, sde->diffusion[k], e->sym);
			if (uses) {
				report(s, SESSION_INPUT, &st->loc,
				       "the SDE of '%s' uses '%s', which has no SDE yet (declare d%s = ... or param %s)",
				       expr_sym_name(sde->state), e->name, e->name, e->name);
				return false;
			}
		}
	}
	return true;
}

static bool close_corr_block(session *s);

static bool run_statement(session *s, const ast_node *st)
{
	expr_clear_error(s->ctx);
	if (st->kind != AST_S_CORR && !close_corr_block(s))
		return false;
	switch (st->kind) {
	case AST_S_EXPR: case AST_S_D: case AST_S_DRIFT: case AST_S_DIFFUSION: case AST_S_GENERATOR:
	case AST_S_QV: case AST_S_PDE: case AST_S_SDE_ITO: case AST_S_SDE_STRAT: case AST_S_CLAIM: case AST_S_CHECK:
	case AST_S_STATE: case AST_S_MEASURE:
		if (!model_complete(s, st))
			return false;
		break;
	default:
		break;
	}
	switch (st->kind) {
	case AST_S_EXPR:
		return run_expr_statement(s, st);
	case AST_S_D:
		return run_d(s, st);
	case AST_S_DRIFT:
	case AST_S_DIFFUSION:
	case AST_S_GENERATOR:
		return run_part(s, st);
	case AST_S_QV:
		return run_qv(s, st);
	case AST_S_PDE:
		return run_pde(s, st);
	case AST_S_SDE_ITO:
		return run_sde_display(s, st, false);
	case AST_S_SDE_STRAT:
		return run_sde_display(s, st, true);
	case AST_S_PARAM:
		return run_param(s, st);
	case AST_S_ASSUME:
		return run_assume(s, st);
	case AST_S_NOISE:
		return run_noise(s, st);
	case AST_S_CORR:
		return run_corr(s, st);
	case AST_S_FUNC:
		return run_func(s, st);
	case AST_S_SDE:
		return run_sde(s, st, false);
	case AST_S_STRAT_SDE:
		return run_sde(s, st, true);
	case AST_S_LET:
		return run_let(s, st);
	case AST_S_MEASURE:
		return run_measure(s, st);
	case AST_S_UNDER:
		return run_under(s, st);
	case AST_S_STATE:
		return run_state(s, st);
	case AST_S_CLAIM:
		return run_claim(s, st);
	case AST_S_CHECK:
		return run_check(s, st);
	case AST_S_SHOW:
		return run_show(s, st);
	case AST_S_SAVE:
		return run_save(s, st);
	case AST_S_LOAD: {
		if (s->opt.no_files) {
			report(s, SESSION_INPUT, &st->loc, "load is disabled in this session");
			return false;
		}
		if (s->load_depth > 16) {
			report(s, SESSION_LIMIT, &st->loc, "load nested too deeply");
			return false;
		}
		s->load_depth++;
		int before = s->status;
		s->status = SESSION_OK;
		int status = session_run_file(s, st->text);
		s->load_depth--;
		if (status == SESSION_INPUT && !s->status)
			report(s, SESSION_INPUT, &st->loc, "cannot read '%s'", st->text);
		raise_status(s, before);
		return status < SESSION_INPUT;
	}
	case AST_S_FORMAT:
		return run_format(s, st);
	case AST_S_HELP:
		return run_help(s, st);
	case AST_S_QUIT:
		s->quit = true;
		return true;
	default:
		report(s, SESSION_INPUT, &st->loc, "not a statement");
		return false;
	}
}

/* ------------------------------------------------------------------ claim and check */

static bool run_claim(session *s, const ast_node *st)
{
	verify_claim_input in = {0};
	const ast_node *lhs = st->a;
	value left = {0}, right = {0};
	bool ok = true;
	if (lhs->kind == AST_S_D || lhs->kind == AST_S_DRIFT || lhs->kind == AST_S_DIFFUSION ||
	    lhs->kind == AST_S_GENERATOR || lhs->kind == AST_S_QV) {
		const expr *e;
		if (!eval_scalar(s, lhs->a, &e))
			return false;
		ito_diff d;
		ito_d(&s->model, s->measure, e, &d);
		if (lhs->kind == AST_S_D || lhs->kind == AST_S_DIFFUSION) {
			if (lhs->kind == AST_S_DIFFUSION)
				d.dt = expr_int(s->ctx, 0);
			left.is_diff = true;
			left.d = d;
		} else if (lhs->kind == AST_S_QV) {
			const expr *rate = ito_covariation(&s->model, &d, &d);
			if (lhs->b) {
				const expr *b;
				ito_diff db;
				if (!eval_scalar(s, lhs->b, &b)) {
					ito_diff_free(&d);
					return false;
				}
				ito_d(&s->model, s->measure, b, &db);
				rate = ito_covariation(&s->model, &d, &db);
				ito_diff_free(&db);
			}
			left.e = rate;
			ito_diff_free(&d);
		} else {
			left.e = d.dt;
			ito_diff_free(&d);
		}
	} else if (!eval_node(s, lhs, &left)) {
		return false;
	}
	if (!eval_node(s, st->b, &right)) {
		value_free(&left);
		return false;
	}
	if (left.is_diff != right.is_diff) {
		report(s, SESSION_INPUT, &st->b->loc, left.is_diff ? "the left side is a differential, the right side is not"
								   : "the right side is a differential, the left side is not");
		ok = false;
	}
	if (ok && engine_failed(s, &st->loc))
		ok = false;
	if (ok) {
		in.is_diff = left.is_diff;
		if (left.is_diff) {
			in.nparts = left.d.n + 1;
			in.lhs = xcalloc(in.nparts, sizeof *in.lhs);
			in.rhs = xcalloc(in.nparts, sizeof *in.rhs);
			in.lhs[0] = left.d.dt;
			in.rhs[0] = right.d.dt;
			for (size_t k = 0; k < left.d.n; k++) {
				in.lhs[k + 1] = left.d.dw[k];
				in.rhs[k + 1] = k < right.d.n ? right.d.dw[k] : expr_int(s->ctx, 0);
			}
		} else {
			in.nparts = 1;
			in.lhs = xcalloc(1, sizeof *in.lhs);
			in.rhs = xcalloc(1, sizeof *in.rhs);
			in.lhs[0] = left.e;
			in.rhs[0] = right.e;
		}
		verify_result result;
		verify_claim(s->ctx, &s->model, &in, s->opt.seed + s->claim_count++, &result);
		pending p;
		result_start(s, &p, RESULT_CLAIM, st);
		p.r.claim = &result;
		if (!in.is_diff)
			p.r.diff.noises = NULL; /* a claim of expressions has no parts to name */
		else
			p.r.diff.n = left.d.n;
		ok = result_emit(s, &p, st);
		if (!result.holds)
			raise_status(s, SESSION_FAILED);
		verify_result_free(&result);
		free(in.lhs);
		free(in.rhs);
	}
	value_free(&left);
	value_free(&right);
	return ok;
}

static bool numeric_value(session *s, const ast_node *n, double *out)
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

static bool run_check(session *s, const ast_node *st)
{
	model *m = &s->model;
	const expr *f;
	if (!eval_scalar(s, st->a, &f))
		return false;
	check_input in = {.m = m, .q = s->measure, .f = f, .horizon = 1, .steps = 1000,
			  .paths = 20000, .seed = s->opt.seed, .verbose = st->verbose,
			  .max_work = s->opt.max_simulation};
	ito_diff engine;
	ito_d(m, s->measure, f, &engine);
	value hand = {0};
	bool ok = !ito_diff_failed(&engine);
	if (ok && st->b) {
		ok = eval_node(s, st->b, &hand);
		if (ok && !hand.is_diff) {
			report(s, SESSION_INPUT, &st->b->loc, "expected a differential (terms in dt and the noises)");
			ok = false;
		}
		in.hand_derived = true;
	}
	in.d = st->b ? &hand.d : &engine;
	const expr **symbols = xcalloc(st->nitems + 1, sizeof *symbols);
	double *values = xcalloc(st->nitems + 1, sizeof *values);
	for (size_t i = 0; i < st->nitems && ok; i++) {
		const ast_node *as = st->items[i];
		const expr *sym = NULL;
		model_entry *entry = model_lookup(m, as->text);
		if (strcmp(as->text, "t") == 0)
			sym = m->time;
		else if (entry && (entry->kind == MODEL_PARAM || entry->kind == MODEL_STATE ||
				   entry->kind == MODEL_NOISE || entry->kind == MODEL_ARG))
			sym = entry->sym;
		if (!sym) {
			if (entry)
				report(s, SESSION_INPUT, &as->loc, "cannot set the %s '%s' at a point", model_kind_name(entry->kind), as->text);
			else
				unknown_name(s, &as->loc, as->text);
			ok = false;
			break;
		}
		symbols[in.nvalues] = sym;
		ok = numeric_value(s, as->a, &values[in.nvalues]);
		in.nvalues++;
	}
	for (size_t i = 0; i < st->nextra && ok; i++) {
		const ast_node *as = st->extra[i];
		double v = 0;
		if (strcmp(as->text, "scheme") == 0) {
			if (as->a->kind == AST_NAME && strcmp(as->a->text, "milstein") == 0)
				in.milstein = true;
			else if (as->a->kind == AST_NAME && strcmp(as->a->text, "euler") == 0)
				in.milstein = false;
			else {
				report(s, SESSION_INPUT, &as->a->loc, "scheme is euler or milstein");
				ok = false;
			}
			continue;
		}
		if (!numeric_value(s, as->a, &v)) {
			ok = false;
			break;
		}
		if (strcmp(as->text, "T") == 0 && v > 0)
			in.horizon = v;
		else if (strcmp(as->text, "steps") == 0 && v >= 1 && v == (long)v)
			in.steps = (long)v;
		else if (strcmp(as->text, "paths") == 0 && v >= 2 && v == (long)v)
			in.paths = (long)v;
		else if (strcmp(as->text, "seed") == 0 && v >= 0 && v == (unsigned long)v)
			in.seed = (unsigned long)v;
		else {
			report(s, SESSION_INPUT, &as->loc,
			       "over takes T > 0, steps >= 1, paths >= 2 (integers), seed and scheme=euler|milstein");
			ok = false;
		}
	}
	in.symbols = symbols;
	in.values = values;
	if (ok) {
		check_result result;
		check_run(s->ctx, &in, &result);
		if (result.error && expr_error(s->ctx) == EXPR_ERR_INTERRUPTED) {
			engine_failed(s, &st->loc); /* says whether it was Ctrl-C or the time limit */
			ok = false;
		} else if (result.error) {
			report(s, result.limit_hit ? SESSION_LIMIT : SESSION_INPUT, &st->loc, "%s", result.error);
			ok = false;
		} else {
			pending p;
			result_start(s, &p, RESULT_CHECK, st);
			p.r.check = &result;
			ok = result_emit(s, &p, st);
		}
		if (ok && !result.consistent)
			raise_status(s, SESSION_FAILED);
		check_result_free(&result);
	}
	free(symbols);
	free(values);
	ito_diff_free(&engine);
	value_free(&hand);
	return ok;
}

/* ------------------------------------------------------------------ running */

session *session_new(const session_options *options)
{
	session *s = xcalloc(1, sizeof *s);
	s->opt = *options;
	if (!s->opt.out)
		s->opt.out = stdout;
	if (!s->opt.err)
		s->opt.err = stderr;
	s->format = options->format;
	s->abbreviate = true;
	xalloc_use_for_gmp();
	s->ctx = expr_ctx_new();
	expr_ctx_limits(s->ctx)->interrupt = options->interrupt;
	model_init(&s->model, s->ctx);
	expr_sym_set_rank(s->ctx, s->model.time, PRN_RANK_TIME);
	return s;
}

void session_free(session *s)
{
	if (!s)
		return;
	model_free(&s->model);
	expr_ctx_free(s->ctx);
	for (int i = 0; i < 4; i++)
		writer_free(s->writers[i]);
	free(s->corr_before);
	free(s->corr_text);
	free(s->corr_origin);
	free(s);
}

int session_status(const session *s)
{
	return s->status;
}

bool session_quit_requested(const session *s)
{
	return s->quit;
}

void session_each_name(const session *s, void (*fn)(const char *name, void *data), void *data)
{
	for (size_t i = 0; i < s->model.nentries; i++)
		fn(s->model.entries[i].name, data);
}

bool session_incomplete(const char *source, size_t length)
{
	ast_list list;
	ast_parse(source, length, MAX_NESTING, &list);
	bool incomplete = list.error.present && list.error.incomplete;
	ast_list_free(&list);
	return incomplete;
}

/* The first line longer than MAX_LINE: its number, and its length in bytes. */
static bool find_long_line(const char *source, size_t length, int *line, size_t *bytes)
{
	size_t start = 0;
	int number = 1;
	for (size_t i = 0; i <= length; i++) {
		if (i < length && source[i] != '\n')
			continue;
		if (i - start > MAX_LINE) {
			*line = number;
			*bytes = i - start;
			return true;
		}
		start = i + 1;
		number++;
	}
	return false;
}

/* Run the statements of one source (the status saved around it is the caller's). */
static void run_statements(session *s, const char *source, size_t length)
{
	/* a bound on line length keeps messages and the scanner's work in proportion */
	int line;
	size_t bytes;
	if (find_long_line(source, length, &line, &bytes)) {
		ast_loc loc = {line, 1, line, 1};
		s->source = NULL; /* do not echo a megabyte */
		report(s, SESSION_LIMIT, &loc, "line too long (%zu bytes; the limit is %d)", bytes, MAX_LINE);
		return;
	}
	ast_list list;
	ast_parse(source, length, MAX_NESTING, &list);
	for (size_t i = 0; i < list.n && !s->quit; i++) {
		if (s->opt.before_statement)
			s->opt.before_statement(s->opt.hook_data);
		if (!run_statement(s, list.stmts[i]) && s->status >= SESSION_INPUT)
			break;
		if (s->opt.interrupt && *s->opt.interrupt) {
			/* the flag came up after the engine's last poll (while the
			 * result was printed): say so, never stop silently */
			if (*s->opt.interrupt == 2)
				report(s, SESSION_LIMIT, &list.stmts[i]->loc,
				       "time limit exceeded (%g s per statement; see --time-limit)",
				       s->opt.time_limit);
			else
				report(s, SESSION_LIMIT, &list.stmts[i]->loc, "interrupted");
			break;
		}
	}
	if (s->status >= SESSION_INPUT)
		s->corr_block = false; /* the run stopped: its corr statements are not judged */
	if (list.error.present && s->status < SESSION_INPUT && !s->quit)
		report(s, strstr(list.error.message, "too deep") || strstr(list.error.message, "too long")
				  ? SESSION_LIMIT : SESSION_INPUT,
		       &list.error.loc, "%s", list.error.message);
	ast_list_free(&list);
}

/* fixed_line: nonzero for an -e statement, whose messages say -e:N:COLUMN. */
static int run_source(session *s, const char *source, size_t length, const char *origin, int fixed_line)
{
	source_frame outer = enter_source(s, source, length, origin, fixed_line);
	int outer_status = s->status;
	s->status = SESSION_OK;
	run_statements(s, source, length);
	int status = s->status;
	leave_source(s, outer);
	s->status = outer_status;
	raise_status(s, status);
	return status;
}

int session_run(session *s, const char *source, size_t length, const char *origin)
{
	return run_source(s, source, length, origin, 0);
}

int session_run_argument(session *s, const char *statement, int index)
{
	return run_source(s, statement, strlen(statement), "-e", index);
}

int session_run_numbered(session *s, const char *source, size_t length, const char *origin, int index)
{
	return run_source(s, source, length, origin, index);
}

int session_run_file(session *s, const char *path)
{
	FILE *file = fopen(path, "rb");
	if (!file) {
		fprintf(s->opt.err, "%s: error: cannot open the file\n", path);
		raise_status(s, SESSION_INPUT);
		return SESSION_INPUT;
	}
	xbuf buf = {0};
	char chunk[65536];
	size_t n;
	while ((n = fread(chunk, 1, sizeof chunk, file)) > 0)
		xbuf_putn(&buf, chunk, n);
	fclose(file);
	int status = session_run(s, buf.data ? buf.data : "", buf.length, path);
	xbuf_free(&buf);
	return status;
}

const expr *session_expr(session *s, const char *text)
{
	source_frame outer = enter_source(s, text, strlen(text), "<expr>", 0);
	ast_list list;
	ast_parse(text, s->length, MAX_NESTING, &list);
	const expr *result = NULL;
	if (list.error.present)
		report(s, SESSION_INPUT, &list.error.loc, "%s", list.error.message);
	else if (list.n != 1 || list.stmts[0]->kind != AST_S_EXPR)
		report(s, SESSION_INPUT, NULL, "expected one expression");
	else if (!eval_scalar(s, list.stmts[0]->a, &result))
		result = NULL;
	ast_list_free(&list);
	leave_source(s, outer);
	return result;
}

expr_ctx *session_expr_ctx(session *s)
{
	return s->ctx;
}
