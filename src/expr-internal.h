/* expr-internal.h - the layout of nodes and of the context, pointer maps, and
 * the helpers the expr-*.c files share; also read by the modules above expr
 * (simp, diff, eval, print, verify).  Never included by expr.h. */
#ifndef ITOX_EXPR_INTERNAL_H
#define ITOX_EXPR_INTERNAL_H

#include <string.h>

#include "expr.h"
#include "xalloc.h"

struct expr {
	expr_kind kind;
	unsigned hash;
	unsigned height; /* 1 for a leaf, else 1 + the largest height of an operand */
	size_t nops;
	union {
		mpq_t num;
		struct {
			char *name;
			int sign;     /* EXPR_SIGN_* flags that may hold (assumptions) */
			int rank;     /* display class (parameters before states ...) */
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

/* The context.  Its fields are read and written by the expr-*.c files only. */
struct expr_ctx {
	const expr **table; /* intern table, open addressing */
	size_t count, capacity;
	struct expr_memo_entry *memo;
	size_t memo_count, memo_capacity;
	int next_tag;
	expr_limits limits;
	expr_error_kind error;
	char message[512];
	const expr *error_nodes[2]; /* expr_fail_at: the nodes its message names */
	const expr *zero, *one, *minus_one;
	/* Scratch rationals for the constructors, taken and given back in LIFO
	 * order; each keeps its limbs, so hot paths do not allocate. */
	__mpq_struct **scratch;
	size_t scratch_top, scratch_cap;
	const expr *small_ints[33]; /* -16..16, made on first use */
	/* Nodes live in chunks that are freed with the context (nodes are never
	 * freed one by one): arena is the chunk being filled, with left bytes
	 * free at next. */
	struct expr_arena_chunk *arena;
	char *arena_next;
	size_t arena_left;
	/* The journal of symbols' attributes while a mark is open (expr.c). */
	struct expr_sym_record *journal;
	size_t journal_n, journal_cap;
	int journal_depth;
	size_t bytes; /* arena chunks, intern table and memo (limits.max_bytes) */
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

/* Raw constructors that skip the rules: fn(arg) (expr-fun.c), base^exponent (expr-product.c). */
const expr *expr_fun_raw(expr_ctx *ctx, expr_builtin fn, const expr *arg);
const expr *expr_pow_pair(expr_ctx *ctx, const expr *base, const expr *exponent);

/* --- shared by the expr-*.c files (the constructors' machinery) --- */

/* Intern a candidate: the existing equal node, or an arena copy (expr-intern.c). */
const expr *expr_intern(expr_ctx *ctx, expr *candidate);
/* Free the records of the journal of symbols (expr.c). */
void expr_journal_free(expr_ctx *ctx);
/* Double the pool of scratch rationals (expr-intern.c). */
void expr_scratch_grow(expr_ctx *ctx);

/* A scratch rational of the context; give it back with ctx->scratch_top = mark. */
static inline mpq_ptr expr_scratch_take(expr_ctx *ctx)
{
	if (ctx->scratch_top == ctx->scratch_cap)
		expr_scratch_grow(ctx);
	return ctx->scratch[ctx->scratch_top++];
}

/* A stable natural merge sort with qsort's interface (expr-order.c). */
void expr_run_sort(void *base, size_t n, size_t size, int (*compare)(const void *, const void *));

/* Room for one more item in a buffer that starts in caller storage
 * (inline_items, *cap items) and moves to the heap when it outgrows it. */
static inline void *expr_grow_items(void *items, const void *inline_items, size_t n, size_t *cap, size_t size)
{
	if (n < *cap)
		return items;
	size_t grown = *cap ? *cap * 2 : 16;
	if (items == inline_items) {
		void *heap = xreallocarray(NULL, grown, size);
		memcpy(heap, items, n * size);
		items = heap;
	} else
		items = xreallocarray(items, grown, size);
	*cap = grown;
	return items;
}

/* Is e the built-in fn applied to something? */
static inline bool expr_is_fun(const expr *e, expr_builtin fn)
{
	return e->kind == EXPR_FUN && e->u.fun.fn == fn;
}

/* Is e an even integer? */
static inline bool expr_is_even_integer(const expr *e)
{
	return expr_is_integer(e) && mpz_even_p(mpq_numref(e->u.num));
}

/* Is e a positive integer? */
static inline bool expr_is_positive_integer(const expr *e)
{
	return expr_is_integer(e) && mpq_sgn(e->u.num) > 0;
}

/* Is e written with a negative leading coefficient, so -e reads better (expr-sign.c)? */
bool expr_negative_form(const expr *e);

/* For a product c * prod b_i^e_i (c > 0) at a point where it is positive:
 * bases[i] is b_i or abs(b_i), chosen so that b_i^e_i = bases[i]^e_i there and
 * bases[i] > 0 there.  False when that cannot be inferred from the signs
 * (c <= 0, or two factors whose sign follows an unknown base).  bases holds
 * nops entries (expr-sign.c). */
bool expr_positive_bases(expr_ctx *ctx, const expr *product, const expr **bases);

#endif
