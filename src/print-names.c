/* print-names.c - names: LaTeX spellings of identifiers, the names of generic
 * partials; the flat printer (canonical structure, for debugging) and JSON
 * string literals. */
#include "print.h"

#include <ctype.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include "expr-internal.h"
#include "rat.h"
#include "xalloc.h"

/* ------------------------------------------------------------------ names */

static const char *const greek[] = {"alpha", "beta",  "gamma",   "delta",  "epsilon", "zeta",   "eta",
                                    "theta", "iota",  "kappa",   "lambda", "mu",      "nu",     "xi",
                                    "pi",    "rho",   "sigma",   "tau",    "upsilon", "phi",    "chi",
                                    "psi",   "omega", "Gamma",   "Delta",  "Theta",   "Lambda", "Xi",
                                    "Pi",    "Sigma", "Upsilon", "Phi",    "Psi",     "Omega",  NULL};

static bool is_greek(const char *word, size_t length)
{
	for (size_t i = 0; greek[i]; i++)
		if (strlen(greek[i]) == length && strncmp(greek[i], word, length) == 0)
			return true;
	return false;
}

char *prn_latex_name(const char *name, bool time_subscript)
{
	/* split into a stem and a subscript: sigma1 -> sigma_{1}, v_0 -> v_{0} */
	size_t length = strlen(name);
	size_t stem = 0;
	while (stem < length && isalpha((unsigned char)name[stem]))
		stem++;
	const char *sub = name + stem;
	if (*sub == '_')
		sub++;
	xbuf buf = {0};
	if (strcmp(name, "e") == 0 || strcmp(name, "pi") == 0) {
		/* a user's e or pi is no constant of the language, but e^{2} and \pi
		 * would read as Euler's number and the circle constant; \mathit{}
		 * sets them apart as a user's names (exp prints an upright
		 * \mathrm{e}^{...}, so they differ on the page too) */
		xbuf_printf(&buf, "\\mathit{%s}", name);
	} else if (is_greek(name, stem)) {
		xbuf_putc(&buf, '\\');
		if (strncmp(name, "epsilon", stem) == 0 && stem == 7)
			xbuf_put(&buf, "varepsilon");
		else
			xbuf_putn(&buf, name, stem);
	} else if (stem == 1) {
		xbuf_putn(&buf, name, 1);
	} else {
		/* a longer stem: a Greek prefix (sigmaS) or an upright word */
		bool done = false;
		for (size_t i = 0; greek[i] && !done; i++) {
			size_t g = strlen(greek[i]);
			if (g < stem && strncmp(name, greek[i], g) == 0) {
				xbuf_printf(&buf, "\\%s", greek[i]);
				sub = name + g;
				done = true;
			}
		}
		if (!done)
			xbuf_printf(&buf, "\\mathit{%.*s}", (int)stem, name);
	}
	if (*sub || time_subscript) {
		xbuf_put(&buf, "_{");
		for (const char *c = sub; *c; c++) {
			if (*c == '_')
				xbuf_putc(&buf, ',');
			else
				xbuf_putc(&buf, *c);
		}
		if (time_subscript)
			xbuf_put(&buf, *sub ? ",t" : "t");
		xbuf_putc(&buf, '}');
	}
	return xbuf_take(&buf);
}

static bool all_single_letters(const expr *func)
{
	for (size_t i = 0; i < expr_func_arity(func); i++)
		if (strlen(expr_func_arg_name(func, i)) != 1)
			return false;
	return true;
}

char *prn_fapp_name(const expr *e)
{
	if (e->kind != EXPR_FAPP)
		return NULL;
	const expr *func = e->u.fapp.func;
	xbuf buf = {0};
	xbuf_put(&buf, func->u.sym.name);
	size_t total = 0;
	for (size_t i = 0; i < e->nops; i++)
		total += e->u.fapp.counts[i];
	if (total > 0) {
		bool single = all_single_letters(func);
		xbuf_put(&buf, single ? "_" : "_{");
		bool first = true;
		for (size_t i = 0; i < e->nops; i++)
			for (unsigned k = 0; k < e->u.fapp.counts[i]; k++) {
				if (!single && !first)
					xbuf_putc(&buf, ',');
				xbuf_put(&buf, expr_func_arg_name(func, i));
				first = false;
			}
		if (!single)
			xbuf_putc(&buf, '}');
	}
	return xbuf_take(&buf);
}

/* Are the arguments exactly the declared argument symbols? */
static bool at_declared_args(const expr *e)
{
	const expr *func = e->u.fapp.func;
	for (size_t i = 0; i < e->nops; i++) {
		const expr *a = e->u.fapp.args[i];
		if (a->kind != EXPR_SYM || strcmp(a->u.sym.name, expr_func_arg_name(func, i)) != 0)
			return false;
	}
	return true;
}

bool prn_fapp_declared(const expr *e)
{
	return e->kind == EXPR_FAPP && at_declared_args(e);
}

/* ------------------------------------------------------------------ flat printer */

static void flat(expr_ctx *ctx, xbuf *out, const expr *e)
{
	switch (e->kind) {
	case EXPR_NUM: {
		char *s = rat_to_string(e->u.num);
		bool paren = mpq_sgn(e->u.num) < 0 || !rat_is_integer(e->u.num);
		xbuf_printf(out, paren ? "(%s)" : "%s", s);
		free(s);
		return;
	}
	case EXPR_SYM:
		xbuf_put(out, e->u.sym.name);
		return;
	case EXPR_FUN:
		xbuf_printf(out, "%s(", expr_builtin_name(e->u.fun.fn));
		flat(ctx, out, e->u.fun.arg);
		xbuf_putc(out, ')');
		return;
	case EXPR_FAPP: {
		char *name = prn_fapp_name(e);
		xbuf_printf(out, "%s(", name);
		free(name);
		for (size_t i = 0; i < e->nops; i++) {
			if (i)
				xbuf_put(out, ", ");
			flat(ctx, out, e->u.fapp.args[i]);
		}
		xbuf_putc(out, ')');
		return;
	}
	case EXPR_MUL: {
		char *s = rat_to_string(e->u.mul.coef);
		xbuf_printf(out, "(%s)", s);
		free(s);
		for (size_t i = 0; i < e->nops; i++) {
			xbuf_put(out, "*(");
			flat(ctx, out, e->u.mul.bases[i]);
			xbuf_put(out, ")^(");
			flat(ctx, out, e->u.mul.exps[i]);
			xbuf_putc(out, ')');
		}
		return;
	}
	case EXPR_ADD:
		xbuf_putc(out, '(');
		for (size_t i = 0; i < e->nops; i++) {
			if (i)
				xbuf_put(out, " + ");
			flat(ctx, out, e->u.add.terms[i]);
		}
		xbuf_putc(out, ')');
		return;
	}
}

char *prn_expr_flat(expr_ctx *ctx, const expr *e)
{
	if (!e)
		return xstrdup("<error>");
	xbuf out = {0};
	flat(ctx, &out, e);
	return xbuf_take(&out);
}

void prn_json_string(xbuf *buf, const char *text)
{
	xbuf_putc(buf, '"');
	for (const unsigned char *c = (const unsigned char *)text; *c; c++) {
		switch (*c) {
		case '"':
			xbuf_put(buf, "\\\"");
			break;
		case '\\':
			xbuf_put(buf, "\\\\");
			break;
		case '\n':
			xbuf_put(buf, "\\n");
			break;
		case '\t':
			xbuf_put(buf, "\\t");
			break;
		default:
			if (*c < 0x20)
				xbuf_printf(buf, "\\u%04x", *c);
			else
				xbuf_putc(buf, (char)*c);
		}
	}
	xbuf_putc(buf, '"');
}

/* ------------------------------------------------------------------ length */

/* The memo of prn_length_estimate: node -> its length (open addressing). */
typedef struct length_memo {
	const expr **keys;
	size_t *lengths;
	size_t count, capacity;
} length_memo;

static size_t *length_slot(length_memo *memo, const expr *e)
{
	if ((memo->count + 1) * 2 >= memo->capacity) {
		length_memo grown = {xcalloc(memo->capacity ? 2 * memo->capacity : 256, sizeof *grown.keys), NULL,
		                     0, memo->capacity ? 2 * memo->capacity : 256};
		grown.lengths = xcalloc(grown.capacity, sizeof *grown.lengths);
		for (size_t i = 0; i < memo->capacity; i++)
			if (memo->keys[i])
				*length_slot(&grown, memo->keys[i]) = memo->lengths[i];
		free(memo->keys);
		free(memo->lengths);
		*memo = grown;
	}
	size_t slot = (size_t)(((uintptr_t)e >> 4) * 0x9e3779b97f4a7c15u) & (memo->capacity - 1);
	while (memo->keys[slot] && memo->keys[slot] != e)
		slot = (slot + 1) & (memo->capacity - 1);
	if (!memo->keys[slot]) {
		memo->keys[slot] = e;
		memo->lengths[slot] = SIZE_MAX; /* not known yet */
		memo->count++;
	}
	return &memo->lengths[slot];
}

/* a + b, saturating at the cap */
static size_t add_capped(size_t a, size_t b, size_t cap)
{
	return a >= cap || b >= cap || a + b >= cap ? cap : a + b;
}

static size_t digits(mpz_srcptr z)
{
	size_t n = mpz_sizeinbase(z, 10); /* exact or one too many */
	return n > 1 ? n - 1 : 1;
}

static size_t length_of(const expr *e, const prn_abbrev *abbrev, size_t cap, length_memo *memo, bool top)
{
	if (abbrev && !top && e->kind != EXPR_NUM && e->kind != EXPR_SYM)
		for (size_t i = 0; i < abbrev->n; i++)
			if (abbrev->nodes[i] == e)
				return strlen(abbrev->names[i]);
	size_t *known = length_slot(memo, e);
	if (*known != SIZE_MAX)
		return *known;
	size_t n = 0;
	switch (e->kind) {
	case EXPR_NUM:
		n = digits(mpq_numref(e->u.num));
		if (mpz_cmp_ui(mpq_denref(e->u.num), 1) != 0)
			n += 1 + digits(mpq_denref(e->u.num));
		break;
	case EXPR_SYM:
		n = strlen(e->u.sym.name);
		break;
	case EXPR_FUN:
		n = add_capped(strlen(expr_builtin_name(e->u.fun.fn)) + 2,
		               length_of(e->u.fun.arg, abbrev, cap, memo, false), cap);
		break;
	case EXPR_FAPP:
		n = strlen(e->u.fapp.func->u.sym.name);
		break;
	case EXPR_ADD:
		n = e->nops - 1;
		for (size_t i = 0; i < e->nops && n < cap; i++)
			n = add_capped(n, length_of(e->u.add.terms[i], abbrev, cap, memo, false), cap);
		break;
	case EXPR_MUL:
		n = e->nops - 1;
		for (size_t i = 0; i < e->nops && n < cap; i++) {
			n = add_capped(n, length_of(e->u.mul.bases[i], abbrev, cap, memo, false), cap);
			const expr *x = e->u.mul.exps[i];
			if (!(x->kind == EXPR_NUM && mpz_cmpabs_ui(mpq_numref(x->u.num), 1) == 0 &&
			      mpz_cmp_ui(mpq_denref(x->u.num), 1) == 0))
				n = add_capped(n, length_of(x, abbrev, cap, memo, false), cap);
		}
		break;
	}
	/* the slot may have moved while the operands were measured */
	*length_slot(memo, e) = n;
	return n;
}

size_t prn_length_estimate(const expr *e, const prn_abbrev *abbrev, size_t cap)
{
	if (!e)
		return 0;
	length_memo memo = {0};
	size_t n = length_of(e, abbrev, cap, &memo, true);
	free(memo.keys);
	free(memo.lengths);
	return n;
}
