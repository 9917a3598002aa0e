/* chstate.h - a change of state variable: the model rewritten in x = forward(X).
 *
 * For a state X with an SDE, a new variable x = forward(X) and its inverse
 * X = inverse(x), Itô's formula gives the SDE of x; every other coefficient,
 * definition and measure shift is rewritten by substituting the inverse for X.
 */
#ifndef ITOX_CHSTATE_H
#define ITOX_CHSTATE_H

#include "model.h"

typedef struct chstate_change {
	const expr *old_sym; /* the state X that is replaced */
	const expr *new_sym; /* the new state x */
	const expr *forward; /* x = forward(X), an expression in X */
	const expr *inverse; /* X = inverse(x), an expression in x */
} chstate_change;

typedef enum chstate_error {
	CHSTATE_OK,
	CHSTATE_ENGINE,         /* the engine failed (a limit): its error is in the context */
	CHSTATE_NOT_INVERSE,    /* forward(inverse(x)) is not x */
	CHSTATE_NOT_ONE_TO_ONE, /* inverse(forward(X)) is not X where X can go */
} chstate_error;

/* Give the new variable the sign of the forward map where that is known
 * (sqrt(v) >= 0, exp(x) > 0), within the sign it had; returns the sign it had.
 * The sign comes from the sign oracle, so it follows from the declared
 * assumptions on the forward map's names. */
int chstate_infer_sign(expr_ctx *ctx, const expr *new_sym, const expr *forward);

/* Are the two maps inverse to each other on the declared domains?  First
 * forward(inverse(x)) = x (CHSTATE_NOT_INVERSE), then inverse(forward(X)) = X
 * under the declared signs of X (CHSTATE_NOT_ONE_TO_ONE: sqrt(S^2) is abs(S)
 * unless S >= 0).  Both are decided on canonical forms; *round gets the
 * composition that is not the identity, for the message. */
chstate_error chstate_check_inverse(expr_ctx *ctx, const chstate_change *change, const expr **round);

/* A sign of the old state (EXPR_SIGN_POS or EXPR_SIGN_NEG, tried in that order)
 * that, were it assumed, would make both compositions the identity; 0 when
 * neither does.  For the message of CHSTATE_NOT_ONE_TO_ONE; nothing changes. */
int chstate_sign_that_helps(expr_ctx *ctx, const chstate_change *change);

/* Rewrite the model in the new state: the old state's SDE becomes the Itô
 * SDE of x, everything else is substituted (coefficients, lets, measure
 * shifts, bounds and relations), and the old state's own range becomes
 * relations on inverse(x) (S > 1 with S = exp(x): exp(x) > 1), but for those
 * the sign oracle already proves.  CHSTATE_ENGINE when Itô's
 * formula fails (the model unchanged); an engine error in the substitutions
 * stays in the context for the caller to check. */
chstate_error chstate_apply(model *m, const chstate_change *change);

#endif
