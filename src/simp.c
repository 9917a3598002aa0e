/* simp.c - the layer above the canonical core for rules that depend on
 * assumptions.
 *
 * The rules themselves (expr-fun.c for the built-in functions, expr-power.c
 * for powers) and the sign oracle they rely on (expr-sign.c) belong to expr:
 * the constructors apply them to every node they make.  Here: making a node
 * again after an assumption changed, and the written sign of a node.
 */
#include "expr-internal.h"
#include "simp.h"

/* Rebuild e through the constructors, so rules that depend on assumptions
 * declared after e was made can fire. */
const expr *simp_refresh(expr_ctx *ctx, const expr *e)
{
	return expr_rebuild(ctx, e, NULL, NULL);
}

bool simp_negative_form(const expr *e)
{
	return expr_negative_form(e);
}
