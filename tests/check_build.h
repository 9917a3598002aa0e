/* check_build.h - shorthand constructors for the unit tests of the core.
 * The including file defines `static expr_ctx *ctx;` before including it. */
#ifndef ITOX_CHECK_BUILD_H
#define ITOX_CHECK_BUILD_H

#include <stdlib.h>

#include "expr.h"
#include "print.h"

#define N(v) expr_int(ctx, v)
#define Q(p, q) expr_rat(ctx, p, q)
#define ADD(u, v) expr_add(ctx, u, v)
#define SUB(u, v) expr_sub(ctx, u, v)
#define MUL(u, v) expr_mul(ctx, u, v)
#define DIV(u, v) expr_div(ctx, u, v)
#define POW(u, v) expr_pow(ctx, u, v)
#define NEG(u) expr_neg(ctx, u)
#define FN(f, u) expr_fun(ctx, EXPR_F_##f, u)
#define SQRT(u) expr_pow_rat(ctx, u, 1, 2)

/* The two sides must be the same node; the message shows both in canonical structure. */
#define SAME(got, want)                                                                   \
	do {                                                                              \
		const expr *got_ = (got), *want_ = (want);                                \
		ck_assert_msg(got_ && want_, "NULL node (%s)", expr_error_message(ctx));   \
		if (got_ != want_) {                                                      \
			char *g_ = prn_expr_flat(ctx, got_), *w_ = prn_expr_flat(ctx, want_); \
			ck_assert_msg(0, "%s: got %s, expected %s", #got, g_, w_);         \
			free(g_);                                                         \
			free(w_);                                                         \
		}                                                                         \
	} while (0)

#endif
