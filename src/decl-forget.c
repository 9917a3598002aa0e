/* decl-forget.c - correcting declarations: `forget NAME`, and what a
 * declaration made again does.
 *
 * In the REPL a declaration made again (a state's SDE, a parameter's domain,
 * a correlation, a let, a measure) replaces the old one and says so; in a
 * script that is an error (decl.c, decl-change.c), so a script cannot
 * silently redefine a model.  `forget NAME` removes a declaration that
 * nothing else uses, or says what uses it.  Results computed before are
 * text already printed: neither changes them.
 */
#include "session-internal.h"

#include <stdarg.h>
#include <stdlib.h>
#include <string.h>

#include "print.h"
#include "xalloc.h"

bool replaces(const session *s)
{
	return s->interactive && s->load_depth == 0;
}

void replaced(session *s, const char *format, ...)
{
	va_list args;
	va_start(args, format);
	vfprintf(s->opt.err, format, args);
	va_end(args);
	fputc('\n', s->opt.err);
	fflush(s->opt.err);
}

/* ------------------------------------------------------------------ declarations made again */

/* dX = ... for a state that has an SDE: the same SDE again (load after
 * save) changes nothing; another one is an error in a script and replaces
 * the old one in the REPL. */
bool sde_again(session *s, const ast_node *st, model_entry *entry, bool stratonovich)
{
	model *m = &s->model;
	model_sde *existing = model_sde_of(m, entry->sym);
	value again;
	s->in_sde = true;
	bool evaluated = eval_node(s, st->a, &again);
	s->in_sde = false;
	if (!evaluated)
		return false;
	if (!again.is_diff) {
		report(s, SESSION_INPUT, &st->a->loc,
		       "the right side of an SDE must contain dt or a noise differential");
		return false;
	}
	bool same = existing->stratonovich == stratonovich && again.d.dt == existing->drift;
	for (size_t k = 0; same && k < m->nnoises; k++)
		same = again.d.dw[k] == existing->diffusion[k];
	if (!same && !replaces(s)) {
		value_free(&again);
		report(s, SESSION_INPUT, &st->loc,
		       "the state '%s' already has an SDE; a script cannot redefine it (only the REPL "
		       "replaces a declaration)",
		       entry->name);
		return false;
	}
	if (!same) {
		existing->stratonovich = stratonovich;
		existing->drift = again.d.dt;
		for (size_t k = 0; k < m->nnoises; k++)
			existing->diffusion[k] = again.d.dw[k];
		replaced(s, "replaced the SDE of %s", entry->name);
	}
	value_free(&again);
	return true;
}

/* ------------------------------------------------------------------ uses */

/* Does e contain sym, as a symbol or as the function of an application?
 * tag: a memo tag of this search (shared subexpressions are walked once). */
static bool mentions(expr_ctx *ctx, const expr *e, const expr *sym, int tag)
{
	if (!e)
		return false;
	if (expr_func_arity(sym) == 0)
		return expr_has(ctx, e, sym);
	switch (expr_kind_of(e)) {
	case EXPR_NUM:
	case EXPR_SYM:
		return false;
	default:
		break;
	}
	const expr *known = expr_memo_get(ctx, tag, e, sym);
	if (known)
		return !expr_is_zero(known);
	bool found = expr_kind_of(e) == EXPR_FAPP && expr_fapp_func(e) == sym;
	if (expr_kind_of(e) == EXPR_MUL) {
		for (size_t i = 0; i < expr_nops(e) && !found; i++)
			found = mentions(ctx, expr_mul_base(e, i), sym, tag) ||
			        mentions(ctx, expr_mul_exponent(e, i), sym, tag);
	} else {
		for (size_t i = 0; i < expr_nops(e) && !found; i++)
			found = mentions(ctx, expr_op(e, i), sym, tag);
	}
	expr_memo_put(ctx, tag, e, sym, expr_int(ctx, found ? 1 : 0));
	return found;
}

/* What uses a declaration: the first few users, and how many there are. */
enum { MAX_USERS_NAMED = 4 };
typedef struct users {
	session *s;
	const expr *sym;
	int tag;
	char *named[MAX_USERS_NAMED];
	size_t n;
} users;

static void add_user(users *u, const char *format, ...) __attribute__((format(printf, 2, 3)));

static void add_user(users *u, const char *format, ...)
{
	if (u->n < MAX_USERS_NAMED) {
		char item[512];
		va_list args;
		va_start(args, format);
		vsnprintf(item, sizeof item, format, args);
		va_end(args);
		u->named[u->n] = xstrdup(item);
	}
	u->n++;
}

/* "the SDE of S", "the SDE of S and the measure Q", "A, B, C and 2 more" */
static char *users_text(const users *u)
{
	xbuf text = {0};
	size_t named = u->n < MAX_USERS_NAMED ? u->n : MAX_USERS_NAMED - 1;
	for (size_t i = 0; i < named; i++)
		xbuf_printf(&text, "%s%s", i == 0 ? "" : i + 1 == u->n ? " and " : ", ", u->named[i]);
	if (named < u->n)
		xbuf_printf(&text, " and %zu more", u->n - named);
	return text.data;
}

static void users_free(users *u)
{
	for (size_t i = 0; i < u->n && i < MAX_USERS_NAMED; i++)
		free(u->named[i]);
}

static bool uses(users *u, const expr *e)
{
	return mentions(u->s->ctx, e, u->sym, u->tag);
}

/* The SDEs (other than the state's own), the correlations and the measures. */
static void dynamics_users(users *u, const model_entry *entry)
{
	model *m = &u->s->model;
	long noise = entry->kind == MODEL_NOISE ? model_noise_index(m, entry->sym) : -1;
	for (size_t i = 0; i < m->nsdes; i++) {
		const model_sde *sde = &m->sdes[i];
		if (sde->state == entry->sym)
			continue;
		bool used = uses(u, sde->drift);
		for (size_t k = 0; k < sde->ndiffusion && !used; k++)
			used = uses(u, sde->diffusion[k]) ||
			       ((long)k == noise && !expr_is_zero(sde->diffusion[k]));
		if (used)
			add_user(u, "the SDE of %s", expr_sym_name(sde->state));
	}
	for (size_t i = 0; i < m->nnoises; i++)
		for (size_t j = i + 1; j < m->nnoises; j++) {
			const expr *rho = m->corr[i * m->nnoises + j];
			bool pair = (long)i == noise || (long)j == noise;
			if (rho && (uses(u, rho) || (pair && !expr_is_zero(rho))))
				add_user(u, "corr(%s, %s)", expr_sym_name(m->noises[i]),
				         expr_sym_name(m->noises[j]));
		}
	for (size_t i = 0; i < m->nmeasures; i++) {
		const model_measure *q = &m->measures[i];
		bool used = false;
		for (size_t k = 0; k < q->nnoises && !used; k++)
			used = uses(u, q->shift[k]) || ((long)k == noise && (q->names[k] != m->noises[k] ||
			                                                     !expr_is_zero(q->shift[k])));
		if (used)
			add_user(u, "the measure %s", q->name);
	}
}

/* What uses the declaration of entry, besides itself (its own range and SDE). */
static void find_users(session *s, const model_entry *entry, users *u)
{
	model *m = &s->model;
	*u = (users){.s = s, .sym = entry->sym, .tag = expr_memo_new_tag(s->ctx)};
	if (entry->sym)
		dynamics_users(u, entry);
	for (size_t i = 0; i < m->nentries && entry->sym; i++) {
		const model_entry *other = &m->entries[i];
		if (other == entry)
			continue;
		if (other->kind == MODEL_LET && uses(u, other->value))
			add_user(u, "the definition of %s", other->name);
		if (uses(u, other->lo) || uses(u, other->hi))
			add_user(u, "the domain of %s", other->name);
		for (size_t k = 0; other->kind == MODEL_FUNC && k < expr_func_arity(other->sym); k++)
			if (strcmp(expr_func_arg_name(other->sym, k), entry->name) == 0)
				add_user(u, "the function %s (an argument)", other->name);
	}
	for (size_t i = 0; i < m->nrelations && entry->sym; i++) {
		const model_relation *r = &m->relations[i];
		if (!uses(u, r->difference))
			continue;
		char *lhs = text_expr(s, r->lhs), *rhs = text_expr(s, r->rhs);
		add_user(u, "the assumption %s %s %s", lhs, model_rel_text(r->op), rhs);
		free(lhs);
		free(rhs);
	}
}

char *declaration_users(session *s, const model_entry *entry, size_t *count)
{
	users u;
	find_users(s, entry, &u);
	*count = u.n;
	char *text = u.n ? users_text(&u) : NULL;
	users_free(&u);
	return text;
}

/* ------------------------------------------------------------------ forget */

/* Remove an entry, and give its symbol back its plain attributes (a name
 * declared again later starts afresh: no sign, no function arguments). */
static void remove_entry(session *s, model_entry *entry)
{
	const expr *sym = entry->sym;
	model_forget(&s->model, entry);
	if (!sym)
		return;
	expr_sym_set_sign(s->ctx, sym, EXPR_SIGN_UNKNOWN);
	expr_sym_set_rank(s->ctx, sym, PRN_RANK_PARAM);
	if (expr_func_arity(sym))
		expr_func_declare(s->ctx, sym, 0, NULL);
}

/* After forgetting a function: its argument names that nothing else uses go too. */
static void forget_arguments(session *s, size_t nargs, char **names)
{
	for (size_t i = 0; i < nargs; i++) {
		model_entry *arg = model_lookup(&s->model, names[i]);
		if (!arg || arg->kind != MODEL_ARG || arg->pending_state)
			continue;
		users u;
		find_users(s, arg, &u);
		if (u.n == 0)
			remove_entry(s, arg);
		users_free(&u);
	}
}

bool run_forget(session *s, const ast_node *st)
{
	model *m = &s->model;
	const char *name = st->text;
	ast_loc at = st->loc; /* the name, at the end of the statement */
	at.first_line = at.last_line;
	at.first_column = at.last_column - (int)strlen(name) + 1;
	if (strcmp(name, "t") == 0) {
		report(s, SESSION_INPUT, &at, "'t' is time; it cannot be forgotten");
		return false;
	}
	model_entry *entry = model_lookup(m, name);
	if (!entry) {
		unknown_name(s, &at, name);
		return false;
	}
	size_t count;
	char *text = declaration_users(s, entry, &count);
	if (text) {
		report(s, SESSION_INPUT, &at, "cannot forget '%s': %s %s it", name, text,
		       count == 1 ? "uses" : "use");
		free(text);
		return false;
	}
	model_kind kind = entry->kind;
	if (kind == MODEL_STATE)
		model_remove_sde(m, entry->sym);
	if (kind == MODEL_NOISE)
		model_remove_noise(m, (size_t)model_noise_index(m, entry->sym));
	if (kind == MODEL_MEASURE)
		model_remove_measure(m, name);
	/* the function's argument names, kept while the entry goes */
	size_t nargs = kind == MODEL_FUNC ? expr_func_arity(entry->sym) : 0;
	char **args = xcalloc(nargs + 1, sizeof *args);
	for (size_t i = 0; i < nargs; i++)
		args[i] = xstrdup(expr_func_arg_name(entry->sym, i));
	char *kept = xstrdup(name);
	remove_entry(s, entry);
	forget_arguments(s, nargs, args);
	for (size_t i = 0; i < nargs; i++)
		free(args[i]);
	free(args);
	if (replaces(s))
		replaced(s, "forgot the %s %s", model_kind_name(kind), kept);
	free(kept);
	return true;
}
