/* write-c.c - a whole script as one C99 translation unit for a model library.
 *
 * Each result is a function named after its statement (d log(S) -> d_log_S)
 * taking t and the model's names (parameters, states, function arguments,
 * noises, in declaration order) as doubles: a differential fills *drift and
 * one *diffusion_NOISE per noise, a scalar result is returned.  A let
 * abbreviation becomes a local variable computed once; generic partials are
 * declared for the library to supply; claims and checks are comments.  Only
 * <math.h> is needed.  A name that would clash with <math.h>, a C keyword or
 * the generated code is refused with an error.
 */
#include <ctype.h>
#include <stdlib.h>
#include <string.h>

#include "writer.h"

typedef struct c_state {
	char **functions; /* names given so far */
	size_t nfunctions;
	char **declared; /* generic functions and partials declared so far */
	size_t *declared_nargs;
	size_t ndeclared;
} c_state;

/* Identifiers of C99 and of <math.h> that a model name must not take. */
static const char *const reserved[] = {"auto",
                                       "break",
                                       "case",
                                       "char",
                                       "const",
                                       "continue",
                                       "default",
                                       "do",
                                       "double",
                                       "else",
                                       "enum",
                                       "extern",
                                       "float",
                                       "for",
                                       "goto",
                                       "if",
                                       "inline",
                                       "int",
                                       "long",
                                       "register",
                                       "restrict",
                                       "return",
                                       "short",
                                       "signed",
                                       "sizeof",
                                       "static",
                                       "struct",
                                       "switch",
                                       "typedef",
                                       "union",
                                       "unsigned",
                                       "void",
                                       "volatile",
                                       "while",
                                       "_Bool",
                                       "_Complex",
                                       "_Imaginary",
                                       "acos",
                                       "acosh",
                                       "asin",
                                       "asinh",
                                       "atan",
                                       "atan2",
                                       "atanh",
                                       "cbrt",
                                       "ceil",
                                       "copysign",
                                       "cos",
                                       "cosh",
                                       "erf",
                                       "erfc",
                                       "exp",
                                       "exp2",
                                       "expm1",
                                       "fabs",
                                       "fdim",
                                       "floor",
                                       "fma",
                                       "fmax",
                                       "fmin",
                                       "fmod",
                                       "frexp",
                                       "hypot",
                                       "ilogb",
                                       "ldexp",
                                       "lgamma",
                                       "llrint",
                                       "llround",
                                       "log",
                                       "log10",
                                       "log1p",
                                       "log2",
                                       "logb",
                                       "lrint",
                                       "lround",
                                       "modf",
                                       "nan",
                                       "nearbyint",
                                       "nextafter",
                                       "nexttoward",
                                       "pow",
                                       "remainder",
                                       "remquo",
                                       "rint",
                                       "round",
                                       "scalbln",
                                       "scalbn",
                                       "sin",
                                       "sinh",
                                       "sqrt",
                                       "tan",
                                       "tanh",
                                       "tgamma",
                                       "trunc",
                                       "gamma",
                                       "j0",
                                       "j1",
                                       "jn",
                                       "y0",
                                       "y1",
                                       "yn",
                                       "signgam",
                                       "isnan",
                                       "isinf",
                                       "isfinite",
                                       "isnormal",
                                       "signbit",
                                       "fpclassify",
                                       "INFINITY",
                                       "NAN",
                                       "HUGE_VAL",
                                       "HUGE_VALF",
                                       "HUGE_VALL",
                                       "FP_NAN",
                                       "FP_INFINITE",
                                       "FP_ZERO",
                                       "FP_NORMAL",
                                       "FP_SUBNORMAL",
                                       "FP_FAST_FMA",
                                       "FP_ILOGB0",
                                       "FP_ILOGBNAN",
                                       "MATH_ERRNO",
                                       "MATH_ERREXCEPT",
                                       "math_errhandling",
                                       "float_t",
                                       "double_t",
                                       "isgreater",
                                       "isgreaterequal",
                                       "isless",
                                       "islessequal",
                                       "islessgreater",
                                       "isunordered",
                                       "drift",
                                       "main",
                                       NULL};

static bool is_reserved(const char *name)
{
	for (size_t i = 0; reserved[i]; i++)
		if (strcmp(reserved[i], name) == 0)
			return true;
	return strncmp(name, "diffusion_", 10) == 0 || strncmp(name, "M_", 2) == 0 ||
	       strncmp(name, "__", 2) == 0;
}

static bool is_argument(const model_entry *e)
{
	return e->kind == MODEL_PARAM || e->kind == MODEL_STATE || e->kind == MODEL_ARG ||
	       e->kind == MODEL_NOISE;
}

/* The names a function would declare must be free in C: an error names the first that is not. */
static bool names_free(const writer *w, const stmt_result *r, char **error)
{
	const model *m = w->model;
	for (size_t i = 0; i < m->nentries; i++) {
		const model_entry *e = &m->entries[i];
		if ((is_argument(e) || e->kind == MODEL_LET || e->kind == MODEL_FUNC) &&
		    is_reserved(e->name)) {
			*error = xasprintf(
			        "the name '%s' clashes with C (<math.h>, a keyword or the generated code) "
			        "in the C output; declare it under another name (such as '%s_')",
			        e->name, e->name);
			return false;
		}
	}
	(void)r;
	return true;
}

static bool is_model_name(const writer *w, const char *name)
{
	const model *m = w->model;
	for (size_t i = 0; i < m->nentries; i++)
		if (strcmp(m->entries[i].name, name) == 0)
			return true;
	return strcmp(name, "t") == 0;
}

/* Could name be a partial of a generic function f (f_t, f_xS), declared by a
 * later result?  Such names are left to the partials. */
static bool generic_prefix(const writer *w, const char *name)
{
	const model *m = w->model;
	const c_state *st = w->state;
	for (size_t i = 0; i < m->nentries; i++) {
		const model_entry *e = &m->entries[i];
		size_t n = strlen(e->name);
		if (e->kind == MODEL_FUNC && strncmp(name, e->name, n) == 0 && name[n] == '_')
			return true;
	}
	for (size_t i = 0; i < st->ndeclared; i++) {
		const char *root = st->declared[i];
		size_t n = strcspn(root, "_");
		if (strncmp(name, root, n) == 0 && (name[n] == '_' || name[n] == '\0'))
			return true;
	}
	return false;
}

/* d log(S) under Q -> d_log_S_under_Q, unique in the unit and free in C. */
static char *function_name(writer *w, const stmt_result *r)
{
	c_state *st = w->state;
	xbuf buf = {0};
	const char *text = r->statement ? r->statement : "result";
	bool gap = false;
	for (const char *c = text; *c; c++) {
		if (isalnum((unsigned char)*c)) {
			if (gap && buf.length)
				xbuf_putc(&buf, '_');
			xbuf_putc(&buf, *c);
			gap = false;
		} else {
			gap = true;
		}
	}
	if (r->measure)
		xbuf_printf(&buf, "_under_%s", r->measure);
	char *base = buf.length ? xbuf_take(&buf) : xstrdup("result");
	xbuf_free(&buf);
	if (isdigit((unsigned char)base[0]) || is_reserved(base) || is_model_name(w, base) ||
	    generic_prefix(w, base)) {
		char *prefixed = xasprintf("result_%s", base);
		free(base);
		base = prefixed;
	}
	char *name = xstrdup(base);
	for (int n = 2;; n++) {
		bool taken = false;
		for (size_t i = 0; i < st->nfunctions && !taken; i++)
			taken = strcmp(st->functions[i], name) == 0;
		for (size_t i = 0; i < st->ndeclared && !taken; i++)
			taken = strcmp(st->declared[i], name) == 0;
		if (!taken)
			break;
		free(name);
		name = xasprintf("%s_%d", base, n);
	}
	free(base);
	st->functions = xreallocarray(st->functions, st->nfunctions + 1, sizeof *st->functions);
	st->functions[st->nfunctions++] = xstrdup(name);
	return name;
}

/* A comment: the text with any end-of-comment sequence broken. */
static void comment(xbuf *buf, const char *text)
{
	size_t length = strlen(text);
	while (length && text[length - 1] == '\n')
		length--; /* a table's last newline ends the comment instead */
	xbuf_put(buf, "/* ");
	for (size_t i = 0; i < length; i++) {
		xbuf_putc(buf, text[i]);
		if (text[i] == '*' && text[i + 1] == '/')
			xbuf_putc(buf, ' ');
		if (text[i] == '\n' && i + 1 < length)
			xbuf_put(buf, " * ");
	}
	xbuf_put(buf, " */\n");
}

typedef struct c_body {
	prn_abbrev abbrev; /* the result's lets, with a used flag of our own */
	prn_c_calls calls;
	xbuf code; /* the statements of the body */
} c_body;

static char *c_expr(writer *w, c_body *b, const expr *e)
{
	return prn_expr_c(w->ctx, e, PRN_C, b->abbrev.n ? &b->abbrev : NULL, &b->calls);
}

/* The let locals the body uses, each once and before its first use. */
static void let_locals(writer *w, c_body *b, xbuf *out)
{
	size_t n = b->abbrev.n;
	if (!n)
		return;
	bool *done = xcalloc(n, sizeof *done);
	char **text = xcalloc(n, sizeof *text);
	bool **deps = xcalloc(n, sizeof *deps);
	bool *outer = b->abbrev.used;
	/* the closure: a let used by a used let is used */
	for (bool grew = true; grew;) {
		grew = false;
		for (size_t i = 0; i < n; i++) {
			if (!outer[i] || text[i])
				continue;
			deps[i] = xcalloc(n, sizeof **deps);
			b->abbrev.used = deps[i];
			text[i] = c_expr(w, b, b->abbrev.nodes[i]);
			for (size_t j = 0; j < n; j++)
				if (deps[i][j] && !outer[j])
					outer[j] = grew = true;
		}
	}
	b->abbrev.used = outer;
	/* definitions in dependency order */
	for (size_t emitted = 0, pass = 0; pass < n; pass++)
		for (size_t i = 0; i < n; i++) {
			if (!outer[i] || done[i])
				continue;
			bool ready = true;
			for (size_t j = 0; j < n && ready; j++)
				ready = !deps[i][j] || done[j] || j == i;
			if (!ready)
				continue;
			xbuf_printf(out, "\tconst double %s = %s;\n", b->abbrev.names[i], text[i]);
			done[i] = true;
			emitted++;
		}
	for (size_t i = 0; i < n; i++) {
		free(text[i]);
		free(deps[i]);
	}
	free(text);
	free(deps);
	free(done);
}

static void arguments(writer *w, xbuf *out)
{
	const model *m = w->model;
	xbuf_put(out, "double t");
	for (size_t i = 0; i < m->nentries; i++)
		if (is_argument(&m->entries[i]))
			xbuf_printf(out, ", double %s", m->entries[i].name);
}

/* Can the calls be declared in this unit: each name with one arity, and none
 * the name of a function argument (a parameter A_t would hide the partial
 * A_t of A(t))?  Else false with *error set. */
static bool calls_fit(writer *w, const prn_c_calls *calls, char **error)
{
	c_state *st = w->state;
	for (size_t i = 0; i < calls->n; i++) {
		const char *name = calls->names[i];
		for (size_t j = 0; j < st->ndeclared; j++)
			if (strcmp(st->declared[j], name) == 0 && st->declared_nargs[j] != calls->nargs[i]) {
				*error = xasprintf(
				        "the C output declares each function once, and %s is called with %zu "
				        "arguments here and %zu before; give the unknown function of this "
				        "statement another name",
				        name, calls->nargs[i], st->declared_nargs[j]);
				return false;
			}
		if (is_model_name(w, name)) {
			model_entry *e = model_lookup((model *)w->model, name);
			if (!e || e->kind != MODEL_FUNC) {
				*error = xasprintf(
				        "the name '%s' is both an argument of the C functions and a "
				        "generic function or partial derivative they call; declare it under "
				        "another name (such as '%s_')",
				        name, name);
				return false;
			}
		}
	}
	return true;
}

static void declare_calls(writer *w, const prn_c_calls *calls, xbuf *out)
{
	c_state *st = w->state;
	for (size_t i = 0; i < calls->n; i++) {
		bool seen = false;
		for (size_t j = 0; j < st->ndeclared && !seen; j++)
			seen = strcmp(st->declared[j], calls->names[i]) == 0;
		if (seen)
			continue;
		xbuf_printf(out, "double %s(", calls->names[i]);
		for (size_t k = 0; k < calls->nargs[i]; k++)
			xbuf_put(out, k ? ", double" : "double");
		model_entry *e = model_lookup((model *)w->model, calls->names[i]);
		xbuf_put(out, e && e->kind == MODEL_FUNC
		                      ? "); /* a generic function: the caller supplies it */\n"
		                      : "); /* a partial derivative of a generic function: the caller "
		                        "supplies it */\n");
		st->declared = xreallocarray(st->declared, st->ndeclared + 1, sizeof *st->declared);
		st->declared_nargs =
		        xreallocarray(st->declared_nargs, st->ndeclared + 1, sizeof *st->declared_nargs);
		st->declared_nargs[st->ndeclared] = calls->nargs[i];
		st->declared[st->ndeclared++] = xstrdup(calls->names[i]);
	}
}

static bool is_differential(const stmt_result *r)
{
	return r->kind == RESULT_DIFFERENTIAL || r->kind == RESULT_DIFFUSION || r->kind == RESULT_SDE;
}

static bool has_rows(const stmt_result *r)
{
	return r->kind == RESULT_COEFFICIENTS || r->kind == RESULT_MOMENTS;
}

/* " (out[0]: 1, out[1]: r)" (coefficients) or " (out[0]: m1', ...)" (moments) */
static char *row_names(writer *w, const stmt_result *r)
{
	xbuf buf = {0};
	xbuf_put(&buf, " (");
	for (size_t i = 0; i < r->nrows; i++) {
		char *label =
		        r->kind == RESULT_COEFFICIENTS ? prn_expr(w->ctx, r->labels[i], PRN_TEXT)
		        : r->nvars                     ? xasprintf("%s'", expr_sym_name(r->vars[i]))
		                   : xasprintf("E[%s_t^%zu | %s_0 = %s]", r->name, i + 1, r->name, r->name);
		xbuf_printf(&buf, "%sout[%zu]: %s", i ? ", " : "", i, label);
		free(label);
	}
	xbuf_put(&buf, ")");
	return xbuf_take(&buf);
}

static bool function(writer *w, const stmt_result *r, xbuf *out, char **error)
{
	c_body b = {0};
	bool *used = NULL;
	if (r->abbrev && r->abbrev->n) {
		used = xcalloc(r->abbrev->n, sizeof *used);
		b.abbrev = *r->abbrev;
		b.abbrev.used = used;
	}
	char *name = function_name(w, r);
	if (is_differential(r)) {
		char *drift = c_expr(w, &b, r->kind == RESULT_DIFFUSION ? expr_int(w->ctx, 0) : r->diff.dt);
		xbuf_printf(&b.code, "\t*drift = %s;\n", drift);
		free(drift);
		for (size_t k = 0; k < r->diff.n; k++) {
			char *text = c_expr(w, &b, r->diff.dw[k]);
			xbuf_printf(&b.code, "\t*diffusion_%s = %s;\n", expr_sym_name(r->diff.noises[k]),
			            text);
			free(text);
		}
	} else if (has_rows(r)) {
		for (size_t i = 0; i < r->nrows; i++) {
			char *text = c_expr(w, &b, r->values[i]);
			xbuf_printf(&b.code, "\tout[%zu] = %s;\n", i, text);
			free(text);
		}
	} else {
		char *text = c_expr(w, &b, r->value);
		xbuf_printf(&b.code, "\treturn %s;\n", text);
		free(text);
	}
	if (!calls_fit(w, &b.calls, error)) {
		xbuf_free(&b.code);
		prn_c_calls_free(&b.calls);
		free(used);
		free(name);
		return false;
	}
	xbuf locals = {0};
	let_locals(w, &b, &locals);
	declare_calls(w, &b.calls, out);
	char *place = result_place(r);
	char *rows = has_rows(r) ? row_names(w, r) : xstrdup("");
	char *title = xasprintf("%s: %s%s%s%s%s", place, r->statement ? r->statement : "",
	                        r->kind == RESULT_PDE       ? " (left side of = 0)"
	                        : r->kind == RESULT_FORWARD ? " (right side of the time derivative)"
	                                                    : "",
	                        r->measure ? " under " : "", r->measure ? r->measure : "", rows);
	comment(out, title);
	free(title);
	free(rows);
	free(place);
	xbuf_printf(out, "%s %s(", is_differential(r) || has_rows(r) ? "void" : "double", name);
	arguments(w, out);
	if (r->kind == RESULT_MOMENTS)
		for (size_t k = 0; k < r->nvars; k++)
			xbuf_printf(out, ", double %s", expr_sym_name(r->vars[k]));
	if (has_rows(r))
		xbuf_put(out, ", double *out");
	if (is_differential(r)) {
		xbuf_put(out, ", double *drift");
		for (size_t k = 0; k < r->diff.n; k++)
			xbuf_printf(out, ", double *diffusion_%s", expr_sym_name(r->diff.noises[k]));
	}
	xbuf_printf(out, ")\n{\n%s%s}\n", locals.data ? locals.data : "", b.code.data);
	xbuf_free(&locals);
	xbuf_free(&b.code);
	prn_c_calls_free(&b.calls);
	free(used);
	free(name);
	return true;
}

static bool c_write(writer *w, const stmt_result *r, char **error)
{
	if (!w->state)
		w->state = xcalloc(1, sizeof(c_state));
	if (!names_free(w, r, error))
		return false;
	xbuf buf = {0};
	if (!w->started)
		xbuf_put(&buf,
		         "/* C99 written by itox: each function takes t and the model's names (parameters,\n"
		         " * states, function arguments, noises) in declaration order; a differential fills\n"
		         " * *drift and one *diffusion_NOISE per noise.  It needs only <math.h>. */\n"
		         "#include <math.h>\n\n");
	char *place = result_place(r);
	bool ok = true;
	switch (r->kind) {
	case RESULT_CLAIM: {
		char *detail = writer_claim_detail(r, w->ctx);
		char *text = xasprintf("%s: claim %s%s\n   %s", place, result_claim_verdict(r), detail,
		                       r->statement ? r->statement : "");
		comment(&buf, text);
		free(text);
		free(detail);
		break;
	}
	case RESULT_CHECK: {
		char *verdict = writer_check_verdict(r->check);
		xbuf table = {0};
		writer_check_table(w->ctx, r->check, &table);
		char *text = xasprintf("%s: check %s\n%s", place, verdict, table.data);
		xbuf_free(&table);
		free(verdict);
		comment(&buf, text);
		free(text);
		break;
	}
	case RESULT_MODEL: {
		char *text = xasprintf("%s: the model\n%s", place, r->script ? r->script : "");
		comment(&buf, text);
		free(text);
		break;
	}
	case RESULT_MOMENTS:
		ok = function(w, r, &buf, error);
		if (ok && r->solutions) {
			/* the solution: a second function without the unknowns m_k */
			stmt_result solution = *r;
			char *statement = xasprintf("%s solution", r->statement ? r->statement : "moments");
			solution.statement = statement;
			solution.values = r->solutions;
			solution.nvars = 0;
			xbuf_putc(&buf, '\n');
			ok = function(w, &solution, &buf, error);
			free(statement);
		} else if (ok) {
			char *why = writer_no_solution(r, w->ctx);
			comment(&buf, why);
			free(why);
		}
		break;
	default:
		ok = function(w, r, &buf, error);
		break;
	}
	free(place);
	if (!ok) {
		xbuf_free(&buf);
		return false;
	}
	/* one blank line between results */
	fputs(buf.data, w->out);
	fputc('\n', w->out);
	fflush(w->out);
	xbuf_free(&buf);
	return true;
}

/* The end of the unit: what the library must define for it to link. */
static void c_finish(writer *w)
{
	c_state *st = w->state;
	if (!st || !st->ndeclared)
		return;
	xbuf buf = {0};
	xbuf_put(&buf, "/* The caller supplies these functions (generic functions of the model and their\n"
	               " * partial derivatives, each a double function of doubles in the argument order\n"
	               " * declared above):");
	size_t column = 19;
	for (size_t i = 0; i < st->ndeclared; i++) {
		size_t width = strlen(st->declared[i]) + 2;
		if (column + width > 88) {
			xbuf_put(&buf, "\n *");
			column = 2;
		}
		xbuf_printf(&buf, " %s%s", st->declared[i], i + 1 < st->ndeclared ? "," : ".");
		column += width;
	}
	xbuf_put(&buf, " */\n");
	fputs(buf.data, w->out);
	fflush(w->out);
	xbuf_free(&buf);
}

static void c_free(writer *w)
{
	c_state *st = w->state;
	if (!st)
		return;
	for (size_t i = 0; i < st->nfunctions; i++)
		free(st->functions[i]);
	for (size_t i = 0; i < st->ndeclared; i++)
		free(st->declared[i]);
	free(st->functions);
	free(st->declared);
	free(st->declared_nargs);
	free(st);
	w->state = NULL;
}

const writer_class writer_c = {.name = "c", .write = c_write, .finish = c_finish, .free_state = c_free};
