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

/* ------------------------------------------------------------------ the journal of symbols
 *
 * A symbol's attributes (sign, rank, function arguments) live in its node.
 * While a mark is open, each change first records the attributes it
 * replaces, so a statement that fails can put every symbol back as it was.
 */

typedef struct expr_sym_record {
	expr *sym;
	int sign, rank;
	size_t nargs;
	char **arg_names; /* owned by the record until it is undone or dropped */
} sym_record;

static void free_arg_names(size_t nargs, char **arg_names)
{
	for (size_t i = 0; i < nargs; i++)
		free(arg_names[i]);
	free(arg_names);
}

/* Record the attributes of sym before a change; keep_args: the record takes
 * the argument names (the change replaces them) instead of sharing them. */
static void journal_record(expr_ctx *ctx, expr *sym, bool keep_args)
{
	if (!ctx || ctx->journal_depth == 0)
		return;
	if (ctx->journal_n == ctx->journal_cap) {
		ctx->journal_cap = ctx->journal_cap ? ctx->journal_cap * 2 : 16;
		ctx->journal = xreallocarray(ctx->journal, ctx->journal_cap, sizeof *ctx->journal);
	}
	ctx->journal[ctx->journal_n++] =
	        (sym_record){sym, sym->u.sym.sign, sym->u.sym.rank, keep_args ? sym->u.sym.nargs : 0,
	                     keep_args ? sym->u.sym.arg_names : NULL};
	if (keep_args) {
		sym->u.sym.nargs = 0;
		sym->u.sym.arg_names = NULL;
	} else {
		ctx->journal[ctx->journal_n - 1].nargs = (size_t)-1; /* arguments unchanged */
	}
}

/* Set a symbol's sign.  A weaker assumption than before (a sign given back,
 * a domain replaced) invalidates what the memo derived under the stronger
 * one (sqrt(x^2) = x for x >= 0), so the memo is cleared then. */
static void set_sign(expr_ctx *ctx, expr *sym, int sign_flags)
{
	int old = sym->u.sym.sign;
	sym->u.sym.sign = sign_flags;
	if (ctx && (sign_flags & ~old))
		expr_memo_clear(ctx);
}

size_t expr_sym_mark(expr_ctx *ctx)
{
	ctx->journal_depth++;
	return ctx->journal_n;
}

void expr_sym_undo(expr_ctx *ctx, size_t mark)
{
	while (ctx->journal_n > mark) {
		sym_record *r = &ctx->journal[--ctx->journal_n];
		set_sign(ctx, r->sym, r->sign);
		r->sym->u.sym.rank = r->rank;
		if (r->nargs != (size_t)-1) {
			free_arg_names(r->sym->u.sym.nargs, r->sym->u.sym.arg_names);
			r->sym->u.sym.nargs = r->nargs;
			r->sym->u.sym.arg_names = r->arg_names;
		}
	}
	ctx->journal_depth--;
}

void expr_sym_keep(expr_ctx *ctx, size_t mark)
{
	(void)mark;
	if (--ctx->journal_depth > 0)
		return; /* an outer mark may still undo these changes */
	expr_journal_free(ctx);
}

void expr_journal_free(expr_ctx *ctx)
{
	for (size_t i = 0; i < ctx->journal_n; i++)
		if (ctx->journal[i].nargs != (size_t)-1)
			free_arg_names(ctx->journal[i].nargs, ctx->journal[i].arg_names);
	ctx->journal_n = 0;
	if (ctx->journal_depth == 0) {
		free(ctx->journal);
		ctx->journal = NULL;
		ctx->journal_cap = 0;
	}
}

bool expr_func_declare(expr_ctx *ctx, const expr *sym, size_t nargs, const char *const *arg_names)
{
	if (nargs > EXPR_MAX_FUNC_ARGS || sym->kind != EXPR_SYM)
		return false;
	expr *node = (expr *)sym;
	if (ctx && ctx->journal_depth > 0)
		journal_record(ctx, node, true);
	else
		free_arg_names(node->u.sym.nargs, node->u.sym.arg_names);
	node->u.sym.arg_names = nargs ? xcalloc(nargs, sizeof(char *)) : NULL;
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
	if (sym->kind != EXPR_SYM)
		return;
	journal_record(ctx, (expr *)sym, false);
	set_sign(ctx, (expr *)sym, sign_flags ? sign_flags : EXPR_SIGN_UNKNOWN);
}

int expr_sym_sign(const expr *sym)
{
	return sym->kind == EXPR_SYM ? sym->u.sym.sign : EXPR_SIGN_UNKNOWN;
}

void expr_sym_set_rank(expr_ctx *ctx, const expr *sym, int rank)
{
	if (sym->kind != EXPR_SYM)
		return;
	journal_record(ctx, (expr *)sym, false);
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

/* spellings read as a built-in that make no FUN node of their own */
static const char *const extra_spellings[] = {"sqrt"};

const char *expr_function_spelling(size_t i)
{
	if (i < EXPR_F_COUNT)
		return builtin_table[i].name;
	i -= EXPR_F_COUNT;
	return i < sizeof extra_spellings / sizeof extra_spellings[0] ? extra_spellings[i] : NULL;
}

bool expr_is_function_spelling(const char *name)
{
	for (size_t i = 0; expr_function_spelling(i); i++)
		if (strcmp(expr_function_spelling(i), name) == 0)
			return true;
	return false;
}
