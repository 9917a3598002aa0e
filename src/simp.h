/* simp.h - the layer above the canonical core for rules that depend on
 * assumptions.
 *
 * The rules are applied by the expression constructors themselves (expr_fun,
 * expr_pow), so every node is simplified when it is made; the sign oracle they
 * consult is expr_sign (expr.h).  This header re-applies them to nodes made
 * before an assumption, and tells printers how a node is written.
 */
#ifndef ITOX_SIMP_H
#define ITOX_SIMP_H

#include "expr.h"

/* Rewrite e bottom-up with the current assumptions (for nodes built before an
 * `assume` statement). */
const expr *simp_refresh(expr_ctx *ctx, const expr *e);

/* Is e written with a negative leading coefficient (so that -e reads better)? */
bool simp_negative_form(const expr *e);

#endif
