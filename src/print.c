/* print.c - the text, LaTeX and C writers of display trees.
 *
 * The display tree (print-build.c) has already grouped the terms and pulled
 * out the common factors; the writers decide only spelling and parentheses:
 * precedence, fractions (a numerator over a denominator, divisions of their
 * own for sums in text), powers and roots, functions and partials.
 */
#include "print-internal.h"

#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "rat.h"
#include "xalloc.h"

/* ------------------------------------------------------------------ writing */

enum { P_SUM = 1, P_NEG = 2, P_PROD = 3, P_POW = 4, P_ATOM = 5 };

static int precedence(const dnode *d)
{
	switch (d->kind) {
	case D_SUM:
		return d->n > 1 ? P_SUM : precedence(d->items[0]);
	case D_NEG:
		return P_NEG;
	case D_PROD: {
		if (d->nfactors == 1 && mpq_cmp_ui(d->num, 1, 1) == 0 &&
		    d->factors[0].exponent->kind == EXPR_NUM &&
		    mpq_cmp_ui(d->factors[0].exponent->u.num, 1, 1) == 0)
			return precedence(d->factors[0].base); /* a lone factor reads as its base */
		if (d->nfactors == 1 && mpq_cmp_ui(d->num, 1, 1) == 0 &&
		    d->factors[0].exponent->kind == EXPR_NUM && mpq_sgn(d->factors[0].exponent->u.num) > 0)
			return P_POW;
		return P_PROD;
	}
	case D_NUM:
		return rat_is_integer(d->num) ? P_ATOM : P_PROD;
	default:
		return P_ATOM;
	}
}

static void emit(printer *p, xbuf *out, const dnode *d);

static void emit_paren(printer *p, xbuf *out, const dnode *d, bool paren)
{
	if (paren)
		xbuf_put(out, p->format == PRN_LATEX ? "\\left(" : "(");
	emit(p, out, d);
	if (paren)
		xbuf_put(out, p->format == PRN_LATEX ? "\\right)" : ")");
}

static void emit_number(printer *p, xbuf *out, const mpq_t q)
{
	if (p->format == PRN_C) {
		if (rat_is_integer(q)) {
			char *s = rat_to_string(q);
			xbuf_put(out, s);
			free(s);
			return;
		}
		double value = rat_to_double(q);
		char text[64];
		snprintf(text, sizeof text, "%.17g", value);
		mpq_t back;
		mpq_init(back);
		rat_set_double(back, value);
		bool exact = mpq_equal(back, q) && strlen(text) < 12;
		mpq_clear(back);
		if (exact) {
			xbuf_put(out, text);
		} else {
			char *num = mpz_get_str(NULL, 10, mpq_numref(q));
			char *den = mpz_get_str(NULL, 10, mpq_denref(q));
			xbuf_printf(out, "(%s.0/%s.0)", num, den);
			void (*release)(void *, size_t);
			mp_get_memory_functions(NULL, NULL, &release);
			release(num, strlen(num) + 1);
			release(den, strlen(den) + 1);
		}
		return;
	}
	if (p->format == PRN_LATEX && !rat_is_integer(q) && !p->in_exponent) {
		char *num = rat_to_string(q);
		char *slash = strchr(num, '/');
		*slash = '\0';
		xbuf_printf(out, "\\tfrac{%s}{%s}", num, slash + 1);
		free(num);
		return;
	}
	char *s = rat_to_string(q);
	xbuf_put(out, s);
	free(s);
}

static void emit_symbol(printer *p, xbuf *out, const expr *sym)
{
	if (p->format == PRN_LATEX) {
		int rank = sym->u.sym.rank;
		char *name = prn_latex_name(sym->u.sym.name, !p->plain_states && (rank == PRN_RANK_STATE ||
		                                                                  rank == PRN_RANK_NOISE));
		xbuf_put(out, name);
		free(name);
		return;
	}
	xbuf_put(out, sym->u.sym.name);
}

static bool is_atomic(const dnode *d)
{
	return precedence(d) == P_ATOM;
}

static void emit_fun(printer *p, xbuf *out, const dnode *d)
{
	expr_builtin fn = d->e->u.fun.fn;
	if (p->format == PRN_C) {
		if (d->c_tail) {
			/* a difference made accurate (prn_c_tails): Phi(-x) = erfc(x/sqrt(2))/2 */
			xbuf_put(out, d->c_tail == PRN_TAIL_PHI_REFLECTED ? "(0.5*erfc(0.70710678118654752*("
			              : d->c_tail == PRN_TAIL_ERFC        ? "erfc("
			                                                  : "erfc(-(");
			emit(p, out, d->child);
			xbuf_put(out, d->c_tail == PRN_TAIL_PHI_REFLECTED ? ")))"
			              : d->c_tail == PRN_TAIL_ERFC        ? ")"
			                                                  : "))");
			return;
		}
		if (fn == EXPR_F_NCDF) {
			/* Phi(x) = erfc(-x/sqrt(2))/2, with 1/sqrt(2) spelled out: C99 has no M_SQRT1_2 */
			xbuf_put(out, "(0.5*erfc(-0.70710678118654752*(");
			emit(p, out, d->child);
			xbuf_put(out, ")))");
			return;
		}
		if (fn == EXPR_F_NPDF) {
			xbuf_put(out, "(0.3989422804014327*exp(-0.5*(");
			emit(p, out, d->child);
			xbuf_put(out, ")*(");
			emit(p, out, d->child);
			xbuf_put(out, ")))");
			return;
		}
		xbuf_printf(out, "%s(", expr_builtin_c_name(fn));
		emit(p, out, d->child);
		xbuf_putc(out, ')');
		return;
	}
	if (p->format == PRN_LATEX) {
		if (fn == EXPR_F_ABS) {
			xbuf_put(out, "\\left|");
			emit(p, out, d->child);
			xbuf_put(out, "\\right|");
			return;
		}
		if (fn == EXPR_F_EXP) {
			bool outer = p->in_exponent;
			p->in_exponent = true;
			p->followed = false;
			xbuf_put(out, "\\mathrm{e}^{"); /* upright: Euler's number (ISO 80000-2, from memory) */
			emit(p, out, d->child);
			xbuf_putc(out, '}');
			p->in_exponent = outer;
			return;
		}
		xbuf_put(out, expr_builtin_latex(fn));
		/* \log v without brackets only where nothing follows: \log v S would
		 * read as the log of v S */
		bool plain = (fn == EXPR_F_LOG || fn == EXPR_F_SIN || fn == EXPR_F_COS) && !p->followed;
		p->followed = false;
		if (plain && d->child->kind == D_SYM) {
			xbuf_putc(out, ' ');
			emit(p, out, d->child);
		} else {
			emit_paren(p, out, d->child, true);
		}
		return;
	}
	xbuf_printf(out, "%s(", expr_builtin_name(fn));
	emit(p, out, d->child);
	xbuf_putc(out, ')');
}

/* Remember a generic partial called from C (once per name). */
static void note_call(prn_c_calls *calls, const char *name, size_t nargs)
{
	for (size_t i = 0; i < calls->n; i++)
		if (strcmp(calls->names[i], name) == 0)
			return;
	calls->names = xreallocarray(calls->names, calls->n + 1, sizeof *calls->names);
	calls->nargs = xreallocarray(calls->nargs, calls->n + 1, sizeof *calls->nargs);
	calls->names[calls->n] = xstrdup(name);
	calls->nargs[calls->n++] = nargs;
}

void prn_c_calls_free(prn_c_calls *calls)
{
	for (size_t i = 0; i < calls->n; i++)
		free(calls->names[i]);
	free(calls->names);
	free(calls->nargs);
	*calls = (prn_c_calls){0};
}

static void emit_fapp(printer *p, xbuf *out, const dnode *d)
{
	char *name = prn_fapp_name(d->e);
	bool declared = d->declared;
	if (p->format == PRN_C) {
		for (char *c = name; *c; c++)
			if (*c == '{' || *c == '}' || *c == ',')
				*c = '_';
		/* drop doubled underscores from f_{x,y} -> f__x_y_ */
		xbuf clean = {0};
		for (char *c = name; *c; c++)
			if (!(*c == '_' && (c[1] == '_' || c[1] == '\0')))
				xbuf_putc(&clean, *c);
		xbuf_put(out, clean.data);
		if (p->calls)
			note_call(p->calls, clean.data, d->n);
		xbuf_free(&clean);
		declared = false; /* C always names the arguments */
	} else if (p->format == PRN_LATEX) {
		/* partials in Leibniz notation: \frac{\partial^{2} V}{\partial S \partial v} */
		const expr *func = d->e->u.fapp.func;
		char *stem = prn_latex_name(func->u.sym.name, false);
		size_t total = 0;
		for (size_t i = 0; i < d->e->nops; i++)
			total += d->e->u.fapp.counts[i];
		if (total == 0) {
			xbuf_put(out, stem);
		} else {
			if (total == 1)
				xbuf_printf(out, "\\frac{\\partial %s}{", stem);
			else
				xbuf_printf(out, "\\frac{\\partial^{%zu} %s}{", total, stem);
			bool first = true;
			for (size_t i = 0; i < d->e->nops; i++) {
				unsigned k = d->e->u.fapp.counts[i];
				if (!k)
					continue;
				char *arg = prn_latex_name(expr_func_arg_name(func, i), false);
				xbuf_printf(out, first ? "\\partial %s" : " \\partial %s", arg);
				if (k > 1)
					xbuf_printf(out, "^{%u}", k);
				free(arg);
				first = false;
			}
			xbuf_putc(out, '}');
		}
		free(stem);
	} else {
		xbuf_put(out, name);
	}
	free(name);
	if (declared)
		return;
	xbuf_put(out, p->format == PRN_LATEX ? "\\left(" : "(");
	for (size_t i = 0; i < d->n; i++) {
		if (i)
			xbuf_put(out, ", ");
		emit(p, out, d->items[i]);
	}
	xbuf_put(out, p->format == PRN_LATEX ? "\\right)" : ")");
}

/* C: is the factor u^(p/q) with q odd (q > 1) and u not known to be >= 0?
 * itox reads it as the real q-th root raised to p ((-8)^(1/3) = -2), where
 * C's pow is NaN for u < 0.  A base known >= 0 keeps pow; an even q has a
 * base >= 0 by the domain rules. */
static bool c_real_root(printer *p, const dfactor *f, const mpq_t e)
{
	if (rat_is_integer(e) || mpz_even_p(mpq_denref(e)))
		return false;
	return !f->base_expr || (expr_sign(p->ctx, f->base_expr) & EXPR_SIGN_NEG);
}

/* C: the real root of base raised to e = p/q (q odd): cbrt(u) or
 * pow(cbrt(u), p) for q = 3; pow(fabs(u), p/q) for p even and
 * copysign(pow(fabs(u), p/q), u) for p odd otherwise.  Only <math.h>. */
static void emit_real_root(printer *p, xbuf *out, const dnode *base, const mpq_t e)
{
	if (mpz_cmp_ui(mpq_denref(e), 3) == 0) {
		bool one = mpz_cmp_ui(mpq_numref(e), 1) == 0;
		xbuf_put(out, one ? "cbrt(" : "pow(cbrt(");
		emit(p, out, base);
		if (!one) {
			char *power = mpz_get_str(NULL, 10, mpq_numref(e));
			xbuf_printf(out, "), %s", power);
			void (*release)(void *, size_t);
			mp_get_memory_functions(NULL, NULL, &release);
			release(power, strlen(power) + 1);
		}
		xbuf_putc(out, ')');
		return;
	}
	bool odd = mpz_odd_p(mpq_numref(e));
	xbuf_put(out, odd ? "copysign(pow(fabs(" : "pow(fabs(");
	emit(p, out, base);
	xbuf_put(out, "), ");
	emit_number(p, out, e);
	xbuf_putc(out, ')');
	if (odd) {
		xbuf_put(out, ", ");
		emit(p, out, base);
		xbuf_putc(out, ')');
	}
}

/* base^exponent with |exponent| (the sign is handled by the caller). */
static void emit_power(printer *p, xbuf *out, const dfactor *f, bool absolute)
{
	const dnode *base = f->base;
	bool bare = p->frac_part; /* only this factor may drop its parentheses */
	p->frac_part = false;
	if (f->exp_display) {
		const dnode *ex = f->exp_display;
		if (absolute && ex->kind == D_NEG)
			ex = ex->child;
		if (p->format == PRN_C) {
			xbuf_put(out, "pow(");
			emit(p, out, base);
			xbuf_put(out, ", ");
			emit(p, out, ex);
			xbuf_putc(out, ')');
			return;
		}
		emit_paren(p, out, base, !is_atomic(base));
		if (p->format == PRN_LATEX) {
			bool outer = p->in_exponent;
			p->in_exponent = true;
			p->followed = false;
			xbuf_put(out, "^{");
			emit(p, out, ex);
			xbuf_putc(out, '}');
			p->in_exponent = outer;
		} else {
			xbuf_putc(out, '^');
			emit_paren(p, out, ex, !is_atomic(ex));
		}
		return;
	}
	mpq_t e;
	mpq_init(e);
	mpq_set(e, f->exponent->u.num);
	if (absolute)
		mpq_abs(e, e);
	if (mpq_cmp_ui(e, 1, 1) == 0) {
		bool paren =
		        precedence(base) < P_PROD + (p->format == PRN_LATEX ? 0 : 1) && base->kind != D_FUN;
		emit_paren(p, out, base, paren && !bare);
	} else if (mpq_cmp_ui(e, 1, 2) == 0) {
		if (p->format == PRN_LATEX) {
			xbuf_put(out, "\\sqrt{");
			emit(p, out, base);
			xbuf_putc(out, '}');
		} else {
			xbuf_put(out, "sqrt(");
			emit(p, out, base);
			xbuf_putc(out, ')');
		}
	} else if (p->format == PRN_C) {
		if (c_real_root(p, f, e)) {
			emit_real_root(p, out, base, e);
		} else if (rat_is_integer(e) && mpz_cmp_ui(mpq_numref(e), 4) <= 0 && mpq_sgn(e) > 0 &&
		           is_atomic(base)) {
			unsigned long n = mpz_get_ui(mpq_numref(e));
			for (unsigned long i = 0; i < n; i++) {
				if (i)
					xbuf_putc(out, '*');
				emit(p, out, base);
			}
		} else {
			xbuf_put(out, "pow(");
			emit(p, out, base);
			xbuf_put(out, ", ");
			emit_number(p, out, e);
			xbuf_putc(out, ')');
		}
	} else {
		bool base_paren = !is_atomic(base) || (base->kind == D_FUN && p->format == PRN_LATEX &&
		                                       base->e->u.fun.fn != EXPR_F_ABS);
		emit_paren(p, out, base, base_paren);
		if (p->format == PRN_LATEX) {
			/* v^{3/2}: an exponent holds no stacked fraction */
			char *s = rat_to_string(e);
			xbuf_printf(out, "^{%s}", s);
			free(s);
		} else {
			char *s = rat_to_string(e);
			if (rat_is_integer(e) && mpq_sgn(e) > 0)
				xbuf_printf(out, "^%s", s);
			else
				xbuf_printf(out, "^(%s)", s);
			free(s);
		}
	}
	mpq_clear(e);
}

/* Text only: a sum raised to an integer power cannot share a denominator
 * with other factors, nor be written (a + b)^2 under a bar, because reading
 * back would expand it: such factors are divided one by one (/(a + b)), and
 * higher powers stay in the numerator as (a + b)^(-2). */
static bool lone_sum(const printer *p, const dfactor *f)
{
	return p->format == PRN_TEXT && f->base_expr && f->base_expr->kind == EXPR_ADD && !f->exp_display &&
	       rat_is_integer(f->exponent->u.num) && mpq_sgn(f->exponent->u.num) < 0;
}

static bool is_minus_one(const dfactor *f)
{
	return !f->exp_display && mpq_cmp_si(f->exponent->u.num, -1, 1) == 0;
}

static bool in_denominator(const dfactor *f)
{
	if (f->exp_display)
		return f->exp_display->kind == D_NEG;
	return mpq_sgn(f->exponent->u.num) < 0;
}

/* Which side of the fraction bar a factor goes: 0 numerator, 1 the
 * denominator group, 2 a division of its own. */
static int side(const printer *p, const dfactor *f)
{
	if (!in_denominator(f))
		return 0;
	if (lone_sum(p, f))
		return is_minus_one(f) ? 2 : 0;
	return 1;
}

static void emit_factor_list(printer *p, xbuf *out, const dnode *d, bool denominator, const char *coef_text,
                             size_t *count)
{
	const char *times = p->format == PRN_LATEX ? " " : "*";
	if (coef_text) {
		xbuf_put(out, coef_text);
		(*count)++;
	}
	size_t last = d->nfactors;
	for (size_t i = 0; i < d->nfactors; i++)
		if (side(p, &d->factors[i]) == (denominator ? 1 : 0))
			last = i;
	for (size_t i = 0; i < d->nfactors; i++) {
		const dfactor *f = &d->factors[i];
		if (side(p, f) != (denominator ? 1 : 0))
			continue;
		if (*count)
			xbuf_put(out, times);
		p->followed = p->format == PRN_LATEX && i != last;
		emit_power(p, out, f, denominator);
		p->followed = false;
		(*count)++;
	}
}

static size_t count_side(const printer *p, const dnode *d, int which)
{
	size_t n = 0;
	for (size_t i = 0; i < d->nfactors; i++)
		n += side(p, &d->factors[i]) == which;
	return n;
}

/* Text: the divisions of their own, /(a + b) */
static void emit_lone_divisions(printer *p, xbuf *out, const dnode *d)
{
	for (size_t i = 0; i < d->nfactors; i++) {
		const dfactor *f = &d->factors[i];
		if (side(p, f) != 2)
			continue;
		xbuf_put(out, "/(");
		emit(p, out, f->base);
		xbuf_putc(out, ')');
	}
}

/* |q| = n/d? */
static bool abs_equals(const mpq_t q, unsigned long n, unsigned long d)
{
	return mpz_cmpabs_ui(mpq_numref(q), n) == 0 && mpz_cmp_ui(mpq_denref(q), d) == 0;
}

/* The factor a node is written as, when it is a product of one factor with
 * coefficient 1 (possibly a sum of one term), or NULL. */
static const dfactor *lone_factor(const dnode *d)
{
	while (d->kind == D_SUM && d->n == 1)
		d = d->items[0];
	if (d->kind == D_PROD && d->nfactors == 1 && mpq_cmp_ui(d->num, 1, 1) == 0)
		return &d->factors[0];
	return NULL;
}

/* The questions below follow emit_power and emit for a factor written with
 * |exponent| (one of a denominator, or of a numerator, where exponents are
 * positive). */

/* C: is the factor written as a product?  A small integer power of an atom
 * is one (S*S); pow(S, 5), sqrt(S) and names are not. */
static bool c_written_product(const dfactor *f)
{
	if (f->exp_display)
		return false; /* pow(S, b) */
	const __mpq_struct *e = f->exponent->u.num;
	if (abs_equals(e, 1, 1)) {
		/* S^1 is its base: bracketed when below a power, else what it is written as */
		if (precedence(f->base) < P_POW && f->base->kind != D_FUN)
			return false;
		const dfactor *inner = lone_factor(f->base);
		return inner && c_written_product(inner);
	}
	return rat_is_integer(e) && mpz_cmpabs_ui(mpq_numref(e), 4) <= 0 && is_atomic(f->base);
}

static bool latex_unbroken_factor(const printer *p, const dfactor *f);

/* LaTeX in an exponent: is d written as one unbroken group, with no space,
 * product or slash outside brackets?  Braces are not brackets here: S^{b t},
 * \sqrt{b + c} and \frac{\partial f}{\partial S} are broken. */
static bool latex_unbroken(const printer *p, const dnode *d)
{
	switch (d->kind) {
	case D_NUM:
		return rat_is_integer(d->num); /* 3/2 in an exponent */
	case D_SYM:
		return true;
	case D_FUN: {
		expr_builtin fn = d->e->u.fun.fn;
		if (fn == EXPR_F_EXP || fn == EXPR_F_ABS)
			return latex_unbroken(p, d->child); /* e^{...}, \left|...\right| */
		/* \log v (nothing follows it here: a factor that has another after
		 * it is in a product, which is broken already) */
		bool plain = fn == EXPR_F_LOG || fn == EXPR_F_SIN || fn == EXPR_F_COS;
		return !(plain && d->child->kind == D_SYM);
	}
	case D_FAPP:
		for (size_t i = 0; i < d->e->nops; i++)
			if (d->e->u.fapp.counts[i])
				return false; /* a partial: \frac{\partial f}{\partial S} */
		return true;
	case D_NEG:
		return precedence(d->child) < P_PROD || latex_unbroken(p, d->child);
	case D_SUM:
		return d->n == 1 ? latex_unbroken(p, d->items[0]) : d->n == 0;
	case D_PROD: {
		/* in an exponent a fraction is written a/b; factors are spaced */
		size_t nnum = count_side(p, d, 0);
		if (count_side(p, d, 1) > 0 || !rat_is_integer(d->num))
			return false;
		bool coef = mpq_cmp_ui(d->num, 1, 1) != 0 || nnum == 0;
		if (coef + nnum != 1)
			return false;
		if (coef)
			return true;
		for (size_t i = 0; i < d->nfactors; i++)
			if (side(p, &d->factors[i]) == 0)
				return latex_unbroken_factor(p, &d->factors[i]);
		return true;
	}
	}
	return true;
}

/* A factor written inline (its base keeps its brackets: no \\frac{}{} here). */
static bool latex_unbroken_factor(const printer *p, const dfactor *f)
{
	const dnode *base = f->base;
	if (f->exp_display) {
		const dnode *ex = f->exp_display->kind == D_NEG ? f->exp_display->child : f->exp_display;
		return (!is_atomic(base) || latex_unbroken(p, base)) && latex_unbroken(p, ex);
	}
	const __mpq_struct *e = f->exponent->u.num;
	if (abs_equals(e, 1, 1))
		return (precedence(base) < P_PROD && base->kind != D_FUN) || latex_unbroken(p, base);
	if (abs_equals(e, 1, 2))
		return latex_unbroken(p, base); /* \sqrt{...} */
	bool bracketed = !is_atomic(base) || (base->kind == D_FUN && base->e->u.fun.fn != EXPR_F_ABS);
	return (bracketed || latex_unbroken(p, base)) && rat_is_integer(e); /* S^{3/2} */
}

/* The one factor of a denominator written after a slash (x/S^2) stands bare
 * unless it is written as a product: in C a small power is one (x/(S*S));
 * in a LaTeX exponent so is anything with a space or a slash in it, even in
 * a superscript or under a root, where it would blur where the denominator
 * ends (e^{a/(S^{b t})}, e^{a/(\sqrt{b + c})}, e^{a/(\log v)}).  Text writes
 * every factor as one unit: a name, a call, or a power whose base and
 * exponent are bracketed when compound. */
static bool bare_denominator(const printer *p, const dnode *d)
{
	for (size_t i = 0; i < d->nfactors; i++) {
		const dfactor *f = &d->factors[i];
		if (side(p, f) != 1)
			continue;
		if (p->format == PRN_C)
			return !c_written_product(f);
		if (p->format == PRN_LATEX)
			return latex_unbroken_factor(p, f);
		return true;
	}
	return true;
}

static char *number_text(printer *p, const mpz_t z)
{
	mpq_t q;
	mpq_init(q);
	mpq_set_z(q, z);
	xbuf buf = {0};
	emit_number(p, &buf, q);
	mpq_clear(q);
	return xbuf_take(&buf);
}

static void emit_prod(printer *p, xbuf *out, const dnode *d)
{
	size_t nnum = count_side(p, d, 0), nden = count_side(p, d, 1);
	bool integer = rat_is_integer(d->num);
	bool unit = mpq_cmp_ui(d->num, 1, 1) == 0;
	if (nden == 0 && !integer && count_side(p, d, 2) == 1 && p->format == PRN_TEXT) {
		/* x/(2*(a + b)) reads back the same: a sum's rational content is pulled out */
		char *top = mpz_cmp_ui(mpq_numref(d->num), 1) != 0 || nnum == 0
		                    ? number_text(p, mpq_numref(d->num))
		                    : NULL;
		size_t count = 0;
		emit_factor_list(p, out, d, false, top, &count);
		free(top);
		char *bottom = number_text(p, mpq_denref(d->num));
		for (size_t i = 0; i < d->nfactors; i++)
			if (side(p, &d->factors[i]) == 2) {
				xbuf_printf(out, "/(%s*(", bottom);
				emit(p, out, d->factors[i].base);
				xbuf_put(out, "))");
			}
		free(bottom);
		return;
	}
	bool inline_fraction = p->format == PRN_LATEX && p->in_exponent; /* e^{a/2}, not e^{\tfrac{1}{2} a} */
	if (nden == 0 && (integer || !inline_fraction)) {
		char *coef = NULL;
		if (!unit || nnum == 0) {
			xbuf buf = {0};
			emit_number(p, &buf, d->num);
			coef = xbuf_take(&buf);
		}
		size_t count = 0;
		emit_factor_list(p, out, d, false, coef, &count);
		free(coef);
		emit_lone_divisions(p, out, d);
		return;
	}
	/* a fraction: numerator (with the coefficient's numerator) over denominator */
	char *top = mpz_cmp_ui(mpq_numref(d->num), 1) != 0 || nnum == 0 ? number_text(p, mpq_numref(d->num))
	                                                                : NULL;
	char *bottom = integer ? NULL : number_text(p, mpq_denref(d->num));
	xbuf num = {0}, den = {0};
	size_t count = 0;
	/* only \frac{}{} may drop a lone factor's brackets: e^{(a - b)/4} inline */
	bool bar = p->format == PRN_LATEX && !inline_fraction;
	p->frac_part = bar && nnum + (top != NULL) == 1;
	emit_factor_list(p, &num, d, false, top, &count);
	size_t nnum_parts = count;
	count = 0;
	p->frac_part = bar && nden + (bottom != NULL) == 1;
	emit_factor_list(p, &den, d, true, bottom, &count);
	p->frac_part = false;
	size_t nden_parts = count;
	free(top);
	free(bottom);
	if (p->format == PRN_LATEX && !inline_fraction) {
		xbuf_printf(out, "\\frac{%s}{%s}", num.data, den.data);
	} else {
		bool num_paren = p->format == PRN_C && nnum_parts > 1;
		if (num_paren)
			xbuf_putc(out, '(');
		xbuf_put(out, num.data);
		if (num_paren)
			xbuf_putc(out, ')');
		xbuf_putc(out, '/');
		/* one part (a number, or one factor that is not written as a
		 * product) stands bare: x/S^2 is x/(S^2) since ^ binds tighter */
		bool single = nden_parts == 1 && (nden == 0 || bare_denominator(p, d));
		if (!single)
			xbuf_putc(out, '(');
		xbuf_put(out, den.data);
		if (!single)
			xbuf_putc(out, ')');
		emit_lone_divisions(p, out, d);
	}
	xbuf_free(&num);
	xbuf_free(&den);
}

static void emit(printer *p, xbuf *out, const dnode *d)
{
	switch (d->kind) {
	case D_NUM:
		emit_number(p, out, d->num);
		return;
	case D_SYM:
		emit_symbol(p, out, d->e);
		return;
	case D_FUN:
		emit_fun(p, out, d);
		return;
	case D_FAPP:
		emit_fapp(p, out, d);
		return;
	case D_NEG:
		xbuf_putc(out, '-');
		emit_paren(p, out, d->child, precedence(d->child) < P_PROD);
		return;
	case D_SUM:
		for (size_t i = 0; i < d->n; i++) {
			const dnode *term = d->items[i];
			if (term->kind == D_NEG) {
				xbuf_put(out, i ? " - " : "-");
				emit_paren(p, out, term->child, precedence(term->child) < P_PROD);
			} else {
				if (i)
					xbuf_put(out, " + ");
				emit(p, out, term);
			}
		}
		return;
	case D_PROD:
		emit_prod(p, out, d);
		return;
	}
}

/* Printing is neither interrupted nor stopped by a limit, and a pending
 * error (the time limit reached while the result was being settled, the
 * nodes an error message names) does not make its constructors fail: the
 * grouping calls them and would fail half way (expr_hold; the output budget
 * bounds the work instead). */

char *prn_expr(expr_ctx *ctx, const expr *e, prn_format format)
{
	return prn_expr_abbrev(ctx, e, format, NULL);
}

char *prn_expr_abbrev(expr_ctx *ctx, const expr *e, prn_format format, const prn_abbrev *abbrev)
{
	return prn_expr_c(ctx, e, format, abbrev, NULL);
}

char *prn_expr_c(expr_ctx *ctx, const expr *e, prn_format format, const prn_abbrev *abbrev,
                 prn_c_calls *calls)
{
	if (!e)
		return xstrdup("<error>");
	printer p = {.ctx = ctx, .format = format, .abbrev = abbrev, .calls = calls};
	if (format == PRN_LATEX_PLAIN) {
		p.format = PRN_LATEX;
		p.plain_states = true;
	}
	expr_held held;
	expr_hold(ctx, &held);
	dnode *d = prn_build_top(&p, e);
	if (p.format == PRN_C)
		prn_c_tails(&p, d);
	xbuf out = {0};
	emit(&p, &out, d);
	prn_printer_free(&p);
	expr_release(ctx, &held);
	return xbuf_take(&out);
}

/* One term coefficient*increment of a differential.  The sign and the
 * parentheses come from the coefficient's display tree: a negated product
 * leads with a minus, a sum is bracketed, a sum of negative terms is written
 * -(a + b).  Nothing here reads printed text. */
static void emit_term(printer *p, xbuf *out, const expr *c, const char *increment, bool first)
{
	dnode *d = prn_build_top(p, c);
	while (d->kind == D_SUM && d->n == 1)
		d = d->items[0];
	bool negative = false;
	if (d->kind == D_NEG) {
		negative = true;
		d = d->child;
	} else if (d->kind == D_SUM) {
		bool all_negative = true;
		for (size_t i = 0; i < d->n && all_negative; i++)
			all_negative = d->items[i]->kind == D_NEG;
		const expr *minus_c = all_negative ? expr_neg(p->ctx, c) : NULL;
		if (minus_c) {
			negative = true;
			d = prn_build_top(p, minus_c);
		}
	}
	xbuf_put(out, first ? (negative ? "-" : "") : (negative ? " - " : " + "));
	if (d->kind == D_NUM && mpq_cmp_ui(d->num, 1, 1) == 0) {
		xbuf_put(out, increment); /* dW, not 1*dW */
		return;
	}
	bool latex = p->format == PRN_LATEX;
	bool paren = precedence(d) < P_PROD;
	emit_paren(p, out, d, paren);
	xbuf_put(out, latex ? (paren ? "" : "\\,") : "*");
	xbuf_put(out, increment);
}

char *prn_differential(expr_ctx *ctx, const prn_diff *diff, prn_format format, const prn_abbrev *abbrev)
{
	printer p = {.ctx = ctx, .format = format, .abbrev = abbrev};
	if (format == PRN_LATEX_PLAIN) {
		p.format = PRN_LATEX;
		p.plain_states = true;
	}
	bool latex = p.format == PRN_LATEX;
	xbuf out = {0};
	bool first = true;
	expr_held held;
	expr_hold(ctx, &held);
	if (diff->dt && !expr_is_zero(diff->dt)) {
		emit_term(&p, &out, diff->dt, latex ? "\\mathrm{d}t" : "dt", first);
		first = false;
	}
	for (size_t k = 0; k < diff->n; k++) {
		if (expr_is_zero(diff->dw[k]))
			continue;
		const char *name = expr_sym_name(diff->noises[k]);
		char *increment;
		if (latex) {
			char *l = prn_latex_name(name, true);
			increment =
			        xasprintf(diff->stratonovich ? "\\circ\\mathrm{d}%s" : "\\mathrm{d}%s", l);
			free(l);
		} else {
			increment = xasprintf("d%s", name);
		}
		emit_term(&p, &out, diff->dw[k], increment, first);
		free(increment);
		first = false;
	}
	if (first)
		xbuf_put(&out, "0");
	prn_printer_free(&p);
	expr_release(ctx, &held);
	return xbuf_take(&out);
}
