/* expr-fun.c - built-in functions and generic function applications. */
#include "expr-internal.h"

#include "simp.h"

const expr *expr_fun_raw(expr_ctx *ctx, expr_builtin fn, const expr *arg)
{
	if (!arg)
		return NULL;
	expr candidate = {.kind = EXPR_FUN, .nops = 1};
	candidate.u.fun.fn = fn;
	candidate.u.fun.arg = arg;
	return expr_intern(ctx, &candidate);
}

const expr *expr_fun(expr_ctx *ctx, expr_builtin fn, const expr *arg)
{
	if (!arg)
		return NULL;
	return simp_fun(ctx, fn, arg);
}

const expr *expr_fapp(expr_ctx *ctx, const expr *func, const unsigned char *counts,
		      const expr *const *args)
{
	size_t nargs = expr_func_arity(func);
	if (!func || nargs == 0)
		return NULL;
	for (size_t i = 0; i < nargs; i++)
		if (!args[i])
			return NULL;
	unsigned char zeros[EXPR_MAX_FUNC_ARGS] = {0};
	expr candidate = {.kind = EXPR_FAPP, .nops = nargs};
	candidate.u.fapp.func = func;
	candidate.u.fapp.counts = (unsigned char *)(counts ? counts : zeros);
	candidate.u.fapp.args = (const expr **)args;
	return expr_intern(ctx, &candidate);
}
