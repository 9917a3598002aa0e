/* expr.c - numbers, symbols, inspection and the table of built-in functions.
 *
 * The canonical constructors live in one file per concern:
 *   expr-intern.c   the context: hash-consing, the arena, errors and limits, memo;
 *   expr-order.c    the total order of nodes and the sort of operands;
 *   expr-sum.c      sums;
 *   expr-product.c  products, quotients;
 *   expr-power.c    powers;
 *   expr-fun.c      built-in functions (with their rules) and generic functions;
 *   expr-sign.c     the sign oracle under the assumptions on symbols;
 *   expr-walk.c     pointer maps, expr_has, free symbols, size, rebuild, substitution.
 */
#include "expr-internal.h"

#include <stdbool.h>
#include <stdlib.h>
#include <string.h>

#include "rat.h"
#include "xalloc.h"

/* ------------------------------------------------------------------ numbers, symbols */

const expr *expr_num(expr_ctx *ctx, mpq_srcptr value)
{
	expr candidate = {.kind = EXPR_NUM, .nops = 0};
	/* Borrow the value: intern copies it when the node is new. */
	memcpy(candidate.u.num, value, sizeof(mpq_t));
	return expr_intern(ctx, &candidate);
}

const expr *expr_int(expr_ctx *ctx, long value)
{
	bool small = value >= -16 && value <= 16;
	if (small && ctx->small_ints[value + 16])
		return ctx->small_ints[value + 16];
	size_t mark = ctx->scratch_top;
	mpq_ptr q = expr_scratch_take(ctx);
	mpq_set_si(q, value, 1);
	const expr *e = expr_num(ctx, q);
	ctx->scratch_top = mark;
	if (small)
		ctx->small_ints[value + 16] = e;
	return e;
}

const expr *expr_rat(expr_ctx *ctx, long num, long den)
{
	if (den == 0)
		return expr_fail(ctx, EXPR_ERR_DIVISION, "division by zero");
	mpq_t q;
	mpq_init(q);
	if (den < 0) {
		num = -num;
		den = -den;
	}
	mpq_set_si(q, num, (unsigned long)den);
	mpq_canonicalize(q);
	const expr *e = expr_num(ctx, q);
	mpq_clear(q);
	return e;
}

const expr *expr_decimal(expr_ctx *ctx, const char *literal)
{
	mpq_t q;
	mpq_init(q);
	const expr *e = rat_parse_decimal(q, literal) ? expr_num(ctx, q) : NULL;
	mpq_clear(q);
	return e;
}

const expr *expr_sym(expr_ctx *ctx, const char *name)
{
	expr candidate = {.kind = EXPR_SYM, .nops = 0};
	candidate.u.sym.name = (char *)name;
	return expr_intern(ctx, &candidate);
}

bool expr_func_declare(expr_ctx *ctx, const expr *sym, size_t nargs, const char *const *arg_names)
{
	(void)ctx;
	if (nargs == 0 || nargs > EXPR_MAX_FUNC_ARGS || sym->kind != EXPR_SYM)
		return false;
	expr *node = (expr *)sym;
	for (size_t i = 0; i < node->u.sym.nargs; i++)
		free(node->u.sym.arg_names[i]);
	free(node->u.sym.arg_names);
	node->u.sym.arg_names = xcalloc(nargs, sizeof(char *));
	for (size_t i = 0; i < nargs; i++)
		node->u.sym.arg_names[i] = xstrdup(arg_names[i]);
	node->u.sym.nargs = nargs;
	return true;
}

size_t expr_func_arity(const expr *sym)
{
	return sym->kind == EXPR_SYM ? sym->u.sym.nargs : 0;
}

const char *expr_func_arg_name(const expr *sym, size_t index)
{
	return index < expr_func_arity(sym) ? sym->u.sym.arg_names[index] : NULL;
}

void expr_sym_set_sign(expr_ctx *ctx, const expr *sym, int sign_flags)
{
	(void)ctx;
	if (sym->kind == EXPR_SYM)
		((expr *)sym)->u.sym.sign = sign_flags ? sign_flags : EXPR_SIGN_UNKNOWN;
}

int expr_sym_sign(const expr *sym)
{
	return sym->kind == EXPR_SYM ? sym->u.sym.sign : EXPR_SIGN_UNKNOWN;
}

void expr_sym_set_rank(expr_ctx *ctx, const expr *sym, int rank)
{
	(void)ctx;
	if (sym->kind == EXPR_SYM)
		((expr *)sym)->u.sym.rank = rank;
}

int expr_sym_rank(const expr *sym)
{
	return sym->kind == EXPR_SYM ? sym->u.sym.rank : 0;
}

/* ------------------------------------------------------------------ inspection */

expr_kind expr_kind_of(const expr *e)
{
	return e->kind;
}
unsigned expr_hash(const expr *e)
{
	return e->hash;
}
bool expr_is_num(const expr *e)
{
	return e->kind == EXPR_NUM;
}
bool expr_is_zero(const expr *e)
{
	return e->kind == EXPR_NUM && mpq_sgn(e->u.num) == 0;
}

bool expr_is_one(const expr *e)
{
	return e->kind == EXPR_NUM && mpq_cmp_ui(e->u.num, 1, 1) == 0;
}

bool expr_is_integer(const expr *e)
{
	return e->kind == EXPR_NUM && rat_is_integer(e->u.num);
}

const __mpq_struct *expr_num_value(const expr *e)
{
	return e->u.num;
}
const char *expr_sym_name(const expr *e)
{
	return e->u.sym.name;
}
size_t expr_nops(const expr *e)
{
	return e->kind == EXPR_FUN ? 1 : e->nops;
}

const expr *expr_op(const expr *e, size_t i)
{
	switch (e->kind) {
	case EXPR_ADD:
		return e->u.add.terms[i];
	case EXPR_FUN:
		return e->u.fun.arg;
	case EXPR_FAPP:
		return e->u.fapp.args[i];
	default:
		return NULL;
	}
}

const expr *expr_mul_base(const expr *e, size_t i)
{
	return e->u.mul.bases[i];
}
const expr *expr_mul_exponent(const expr *e, size_t i)
{
	return e->u.mul.exps[i];
}
const __mpq_struct *expr_mul_coef(const expr *e)
{
	return e->u.mul.coef;
}
expr_builtin expr_fun_id(const expr *e)
{
	return e->u.fun.fn;
}
const expr *expr_fapp_func(const expr *e)
{
	return e->u.fapp.func;
}
const unsigned char *expr_fapp_counts(const expr *e)
{
	return e->u.fapp.counts;
}

static const struct {
	const char *name, *c_name, *latex;
} builtin_table[EXPR_F_COUNT] = {
#define EXPR_BUILTIN_ROW(id, name, c_name, latex) {name, c_name, latex},
        EXPR_BUILTINS(EXPR_BUILTIN_ROW)
#undef EXPR_BUILTIN_ROW
};

const char *expr_builtin_name(expr_builtin fn)
{
	return builtin_table[fn].name;
}
const char *expr_builtin_c_name(expr_builtin fn)
{
	return builtin_table[fn].c_name;
}
const char *expr_builtin_latex(expr_builtin fn)
{
	return builtin_table[fn].latex;
}

bool expr_builtin_lookup(const char *name, expr_builtin *fn)
{
	for (int i = 0; i < EXPR_F_COUNT; i++)
		if (strcmp(builtin_table[i].name, name) == 0) {
			*fn = (expr_builtin)i;
			return true;
		}
	return false;
}
