/* expr-internal.h - node layout and pointer maps, shared by expr.c, simp.c, diff.c. */
#ifndef ITOX_EXPR_INTERNAL_H
#define ITOX_EXPR_INTERNAL_H

#include "expr.h"

struct expr {
	expr_kind kind;
	unsigned hash;
	unsigned height; /* 1 for a leaf, else 1 + the largest height of an operand */
	size_t nops;
	union {
		mpq_t num;
		struct {
			char *name;
			int sign;  /* EXPR_SIGN_* flags that may hold (assumptions) */
			int rank;  /* display class (parameters before states ...) */
			size_t nargs; /* > 0 for a generic function */
			char **arg_names;
		} sym;
		struct {
			const expr **terms;
		} add;
		struct {
			mpq_t coef;
			const expr **bases;
			const expr **exps;
			const expr *unit; /* memo: the product with coefficient 1, or NULL */
		} mul;
		struct {
			expr_builtin fn;
			const expr *arg;
		} fun;
		struct {
			const expr *func;
			unsigned char *counts;
			const expr **args;
		} fapp;
	} u;
};

/* A map from node pointers to node pointers (open addressing). */
typedef struct expr_map {
	const void **keys;
	const expr **values;
	size_t count, capacity;
} expr_map;
const expr *expr_map_get(const expr_map *map, const void *key);
void expr_map_put(expr_map *map, const void *key, const expr *value);
void expr_map_free(expr_map *map);

/* Raw constructors that skip the simplification rules (used by simp.c). */
const expr *expr_fun_raw(expr_ctx *ctx, expr_builtin fn, const expr *arg);
const expr *expr_pow_pair(expr_ctx *ctx, const expr *base, const expr *exponent);

/* simp.c: rules for built-in functions under assumptions. */
const expr *simp_fun(expr_ctx *ctx, expr_builtin fn, const expr *arg);

#endif
