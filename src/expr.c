/* expr.c - hash-consed nodes and the canonical constructors.
 *
 * Every constructor normalises before interning, so the intern table only ever
 * holds canonical nodes and equality is pointer equality.  The rules:
 *   sums:      flatten, split each term into c*m, sort by m, merge, drop zeros;
 *   products:  flatten, multiply coefficients, sort bases, add exponents of
 *              equal bases (x^a*x^b = x^(a+b), valid on the principal branch),
 *              fold exp(a)*exp(b) = exp(a+b), expand over sums;
 *   powers:    (c*x^a)^n = c^n*x^(a*n) for integer n; for fractional n the
 *              coefficient must be positive and (x^2k)^n = abs(x)^(2k*n);
 *              (a+b)^n expanded for positive integer n, otherwise the positive
 *              content of the sum is pulled out so 1/(2a+2b) = 1/2*(a+b)^-1.
 */
#include "expr-internal.h"

#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "rat.h"
#include "simp.h"
#include "xalloc.h"

typedef struct memo_entry {
	int tag;
	const void *a, *b;
	const expr *result;
} memo_entry;

struct expr_ctx {
	const expr **table; /* intern table, open addressing */
	size_t count, capacity;
	memo_entry *memo;
	size_t memo_count, memo_capacity;
	int next_tag;
	expr_limits limits;
	expr_error_kind error;
	char message[256];
	const expr *zero, *one, *minus_one;
	/* Scratch rationals for the constructors, taken and given back in LIFO
	 * order; each keeps its limbs, so hot paths do not allocate. */
	__mpq_struct **scratch;
	size_t scratch_top, scratch_cap;
	const expr *small_ints[33]; /* -16..16, made on first use */
	/* Nodes live in chunks that are freed with the context (nodes are never
	 * freed one by one): arena is the chunk being filled, with left bytes
	 * free at next. */
	struct arena_chunk *arena;
	char *arena_next;
	size_t arena_left;
};

typedef struct arena_chunk {
	struct arena_chunk *prev;
	max_align_t data[];
} arena_chunk;

enum { ARENA_MIN = 64 * 1024, ARENA_MAX = 4 * 1024 * 1024 };

/* bytes of node storage, aligned for any type */
static void *arena_alloc(expr_ctx *ctx, size_t bytes)
{
	const size_t align = sizeof(max_align_t);
	bytes = (bytes + align - 1) / align * align;
	if (bytes > ctx->arena_left) {
		size_t size = ctx->arena ? 2 * (size_t)(ctx->arena_next + ctx->arena_left - (char *)ctx->arena->data)
					 : ARENA_MIN;
		size = size > ARENA_MAX ? ARENA_MAX : size;
		size = size < bytes ? bytes : size;
		arena_chunk *chunk = xmalloc(sizeof *chunk + size);
		chunk->prev = ctx->arena;
		ctx->arena = chunk;
		ctx->arena_next = (char *)chunk->data;
		ctx->arena_left = size;
	}
	void *p = ctx->arena_next;
	ctx->arena_next += bytes;
	ctx->arena_left -= bytes;
	return p;
}

static mpq_ptr scratch_take(expr_ctx *ctx)
{
	if (ctx->scratch_top == ctx->scratch_cap) {
		size_t cap = ctx->scratch_cap ? ctx->scratch_cap * 2 : 64;
		ctx->scratch = xreallocarray(ctx->scratch, cap, sizeof *ctx->scratch);
		for (size_t i = ctx->scratch_cap; i < cap; i++) {
			ctx->scratch[i] = xmalloc(sizeof(__mpq_struct));
			mpq_init(ctx->scratch[i]);
		}
		ctx->scratch_cap = cap;
	}
	return ctx->scratch[ctx->scratch_top++];
}

/* ------------------------------------------------------------------ hashing */

static unsigned mix(unsigned h, unsigned v)
{
	h ^= v + 0x9e3779b9u + (h << 6) + (h >> 2);
	return h;
}

static unsigned hash_string(const char *s)
{
	unsigned h = 2166136261u;
	for (; *s; s++)
		h = (h ^ (unsigned char)*s) * 16777619u;
	return h;
}

static unsigned hash_mpq(const mpq_t q)
{
	unsigned h = (unsigned)mpz_get_ui(mpq_numref(q)) * 31u + (unsigned)mpz_sgn(mpq_numref(q));
	h = mix(h, (unsigned)mpz_get_ui(mpq_denref(q)));
	return mix(h, (unsigned)mpz_size(mpq_numref(q)));
}

static unsigned hash_node(const expr *e)
{
	unsigned h = (unsigned)e->kind * 0x45d9f3bu + (unsigned)e->nops;
	switch (e->kind) {
	case EXPR_NUM:
		return mix(h, hash_mpq(e->u.num));
	case EXPR_SYM:
		return mix(h, hash_string(e->u.sym.name));
	case EXPR_ADD:
		for (size_t i = 0; i < e->nops; i++)
			h = mix(h, e->u.add.terms[i]->hash);
		return h;
	case EXPR_MUL:
		h = mix(h, hash_mpq(e->u.mul.coef));
		for (size_t i = 0; i < e->nops; i++)
			h = mix(mix(h, e->u.mul.bases[i]->hash), e->u.mul.exps[i]->hash);
		return h;
	case EXPR_FUN:
		return mix(mix(h, (unsigned)e->u.fun.fn), e->u.fun.arg->hash);
	case EXPR_FAPP:
		h = mix(h, e->u.fapp.func->hash);
		for (size_t i = 0; i < e->nops; i++)
			h = mix(mix(h, e->u.fapp.counts[i]), e->u.fapp.args[i]->hash);
		return h;
	}
	return h;
}

static bool same_node(const expr *a, const expr *b)
{
	if (a->kind != b->kind || a->nops != b->nops || a->hash != b->hash)
		return false;
	switch (a->kind) {
	case EXPR_NUM:
		return mpq_equal(a->u.num, b->u.num);
	case EXPR_SYM:
		return strcmp(a->u.sym.name, b->u.sym.name) == 0;
	case EXPR_ADD:
		return memcmp(a->u.add.terms, b->u.add.terms, a->nops * sizeof(expr *)) == 0;
	case EXPR_MUL:
		return mpq_equal(a->u.mul.coef, b->u.mul.coef) &&
		       memcmp(a->u.mul.bases, b->u.mul.bases, a->nops * sizeof(expr *)) == 0 &&
		       memcmp(a->u.mul.exps, b->u.mul.exps, a->nops * sizeof(expr *)) == 0;
	case EXPR_FUN:
		return a->u.fun.fn == b->u.fun.fn && a->u.fun.arg == b->u.fun.arg;
	case EXPR_FAPP:
		return a->u.fapp.func == b->u.fapp.func &&
		       memcmp(a->u.fapp.counts, b->u.fapp.counts, a->nops) == 0 &&
		       memcmp(a->u.fapp.args, b->u.fapp.args, a->nops * sizeof(expr *)) == 0;
	}
	return false;
}

static void table_grow(expr_ctx *ctx)
{
	size_t capacity = ctx->capacity ? ctx->capacity * 2 : 1024;
	const expr **table = xcalloc(capacity, sizeof *table);
	for (size_t i = 0; i < ctx->capacity; i++) {
		const expr *e = ctx->table[i];
		if (!e)
			continue;
		size_t slot = e->hash & (capacity - 1);
		while (table[slot])
			slot = (slot + 1) & (capacity - 1);
		table[slot] = e;
	}
	free(ctx->table);
	ctx->table = table;
	ctx->capacity = capacity;
}

static void *copy_bytes(void *dst, const void *src, size_t size)
{
	if (size)
		memcpy(dst, src, size);
	return dst;
}

/* Room for one more item in a buffer that starts in caller storage
 * (inline_items, *cap items) and moves to the heap when it outgrows it. */
static void *grow_items(void *items, const void *inline_items, size_t n, size_t *cap, size_t size)
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

/* The height of a node from its operands' heights (they are interned). */
static unsigned node_height(const expr *e)
{
	unsigned h = 0;
	switch (e->kind) {
	case EXPR_NUM:
	case EXPR_SYM:
		break;
	case EXPR_ADD:
		for (size_t i = 0; i < e->nops; i++)
			h = e->u.add.terms[i]->height > h ? e->u.add.terms[i]->height : h;
		break;
	case EXPR_MUL:
		for (size_t i = 0; i < e->nops; i++) {
			h = e->u.mul.bases[i]->height > h ? e->u.mul.bases[i]->height : h;
			h = e->u.mul.exps[i]->height > h ? e->u.mul.exps[i]->height : h;
		}
		break;
	case EXPR_FUN:
		h = e->u.fun.arg->height;
		break;
	case EXPR_FAPP:
		h = e->u.fapp.func->height;
		for (size_t i = 0; i < e->nops; i++)
			h = e->u.fapp.args[i]->height > h ? e->u.fapp.args[i]->height : h;
		break;
	}
	return h + 1;
}

/* q as a read-only GMP number over a copy of from's limbs at limbs (room for
 * both parts); it is never cleared. */
static void read_only_copy(mpq_ptr q, mpq_srcptr from, mp_limb_t *limbs)
{
	size_t nnum = mpz_size(mpq_numref(from)), nden = mpz_size(mpq_denref(from));
	memcpy(limbs, mpz_limbs_read(mpq_numref(from)), nnum * sizeof *limbs);
	memcpy(limbs + nnum, mpz_limbs_read(mpq_denref(from)), nden * sizeof *limbs);
	mpz_roinit_n(mpq_numref(q), limbs, mpq_numref(from)->_mp_size);
	mpz_roinit_n(mpq_denref(q), limbs + nnum, mpq_denref(from)->_mp_size);
}

/* Intern a candidate: return the existing equal node, or an arena copy of it.
 * The candidate's arrays and numbers are borrowed; they are copied when kept. */
static const expr *intern(expr_ctx *ctx, expr *candidate)
{
	candidate->hash = hash_node(candidate);
	if (ctx->count * 2 >= ctx->capacity)
		table_grow(ctx);
	size_t slot = candidate->hash & (ctx->capacity - 1);
	while (ctx->table[slot]) {
		if (same_node(ctx->table[slot], candidate))
			return ctx->table[slot];
		slot = (slot + 1) & (ctx->capacity - 1);
	}
	if (ctx->limits.max_nodes && ctx->count >= ctx->limits.max_nodes)
		return expr_fail(ctx, EXPR_ERR_TOO_LARGE, "expression too large (node limit reached)");
	candidate->height = node_height(candidate);
	if (ctx->limits.max_height && candidate->height > ctx->limits.max_height)
		return expr_fail(ctx, EXPR_ERR_DEPTH, "expression nested too deeply (tree depth limit reached)");
	/* one block in the arena: the node, its operand arrays, the limbs of
	 * its number (read-only GMP numbers over them: nodes never change) */
	size_t n = candidate->nops, extra = 0;
	if (candidate->kind == EXPR_ADD)
		extra = n * sizeof(expr *);
	else if (candidate->kind == EXPR_MUL)
		extra = 2 * n * sizeof(expr *);
	else if (candidate->kind == EXPR_FAPP)
		extra = n * sizeof(expr *) + n;
	mpq_srcptr number = candidate->kind == EXPR_NUM ? candidate->u.num
			    : candidate->kind == EXPR_MUL ? candidate->u.mul.coef : NULL;
	size_t limbs = number ? mpz_size(mpq_numref(number)) + mpz_size(mpq_denref(number)) : 0;
	expr *node = arena_alloc(ctx, sizeof *node + limbs * sizeof(mp_limb_t) + extra);
	*node = *candidate;
	if (number)
		read_only_copy(candidate->kind == EXPR_NUM ? node->u.num : node->u.mul.coef, number,
			       (mp_limb_t *)(node + 1));
	const expr **arrays = (const expr **)((mp_limb_t *)(node + 1) + limbs);
	switch (node->kind) {
	case EXPR_NUM:
		break;
	case EXPR_SYM:
		node->u.sym.name = xstrdup(candidate->u.sym.name);
		node->u.sym.sign = EXPR_SIGN_UNKNOWN;
		node->u.sym.rank = 0;
		node->u.sym.nargs = 0;
		node->u.sym.arg_names = NULL;
		break;
	case EXPR_ADD:
		node->u.add.terms = copy_bytes(arrays, candidate->u.add.terms, n * sizeof *arrays);
		break;
	case EXPR_MUL:
		node->u.mul.bases = copy_bytes(arrays, candidate->u.mul.bases, n * sizeof *arrays);
		node->u.mul.exps = copy_bytes(arrays + n, candidate->u.mul.exps, n * sizeof *arrays);
		node->u.mul.unit = NULL;
		break;
	case EXPR_FUN:
		break;
	case EXPR_FAPP:
		node->u.fapp.args = copy_bytes(arrays, candidate->u.fapp.args, n * sizeof *arrays);
		node->u.fapp.counts = copy_bytes(arrays + n, candidate->u.fapp.counts, n);
		break;
	}
	ctx->table[slot] = node;
	ctx->count++;
	return node;
}

/* What a node owns outside the arena: a symbol's names. */
static void free_node(expr *node)
{
	if (node->kind == EXPR_SYM) {
		free(node->u.sym.name);
		for (size_t i = 0; i < node->u.sym.nargs; i++)
			free(node->u.sym.arg_names[i]);
		free(node->u.sym.arg_names);
	}
}

/* ------------------------------------------------------------------ context */

expr_ctx *expr_ctx_new(void)
{
	expr_ctx *ctx = xcalloc(1, sizeof *ctx);
	ctx->limits.max_nodes = 20u * 1000 * 1000;
	ctx->limits.max_terms = 200000;
	ctx->limits.max_bits = 1u << 20;
	ctx->limits.max_exponent = 1000000;
	ctx->limits.max_height = 5000;
	ctx->next_tag = 1;
	ctx->zero = expr_int(ctx, 0);
	ctx->one = expr_int(ctx, 1);
	ctx->minus_one = expr_int(ctx, -1);
	return ctx;
}

void expr_ctx_free(expr_ctx *ctx)
{
	if (!ctx)
		return;
	for (size_t i = 0; i < ctx->capacity; i++)
		if (ctx->table[i])
			free_node((expr *)ctx->table[i]);
	free(ctx->table);
	free(ctx->memo);
	for (size_t i = 0; i < ctx->scratch_cap; i++) {
		mpq_clear(ctx->scratch[i]);
		free(ctx->scratch[i]);
	}
	free(ctx->scratch);
	for (arena_chunk *chunk = ctx->arena, *prev; chunk; chunk = prev) {
		prev = chunk->prev;
		free(chunk);
	}
	free(ctx);
}

expr_limits *expr_ctx_limits(expr_ctx *ctx)
{
	return &ctx->limits;
}

size_t expr_node_count(const expr_ctx *ctx)
{
	return ctx->count;
}

expr_error_kind expr_error(const expr_ctx *ctx)
{
	return ctx->error;
}

const char *expr_error_message(const expr_ctx *ctx)
{
	return ctx->error ? ctx->message : "";
}

void expr_clear_error(expr_ctx *ctx)
{
	ctx->error = EXPR_OK;
	ctx->message[0] = '\0';
}

const expr *expr_fail(expr_ctx *ctx, expr_error_kind kind, const char *message)
{
	if (!ctx->error) {
		ctx->error = kind;
		snprintf(ctx->message, sizeof ctx->message, "%s", message);
	}
	return NULL;
}

bool expr_poll_interrupt(expr_ctx *ctx)
{
	if (ctx->error)
		return true;
	if (ctx->limits.interrupt && *ctx->limits.interrupt) {
		expr_fail(ctx, EXPR_ERR_INTERRUPTED, "interrupted");
		return true;
	}
	return false;
}

/* ------------------------------------------------------------------ memo */

static size_t memo_slot(const memo_entry *table, size_t capacity, int tag, const void *a,
			const void *b)
{
	uintptr_t h = (uintptr_t)a * 0x9e3779b97f4a7c15u ^ (uintptr_t)b * 0xc2b2ae3d27d4eb4fu ^
		      (uintptr_t)tag * 0x165667b1u;
	h ^= h >> 29;
	size_t slot = (size_t)h & (capacity - 1);
	while (table[slot].tag &&
	       !(table[slot].tag == tag && table[slot].a == a && table[slot].b == b))
		slot = (slot + 1) & (capacity - 1);
	return slot;
}

const expr *expr_memo_get(expr_ctx *ctx, int tag, const void *a, const void *b)
{
	if (!ctx->memo_capacity)
		return NULL;
	size_t slot = memo_slot(ctx->memo, ctx->memo_capacity, tag, a, b);
	return ctx->memo[slot].tag ? ctx->memo[slot].result : NULL;
}

void expr_memo_put(expr_ctx *ctx, int tag, const void *a, const void *b, const expr *result)
{
	if (!result)
		return;
	if ((ctx->memo_count + 1) * 2 >= ctx->memo_capacity) {
		size_t capacity = ctx->memo_capacity ? ctx->memo_capacity * 2 : 1024;
		memo_entry *table = xcalloc(capacity, sizeof *table);
		for (size_t i = 0; i < ctx->memo_capacity; i++) {
			memo_entry *old = &ctx->memo[i];
			if (old->tag)
				table[memo_slot(table, capacity, old->tag, old->a, old->b)] = *old;
		}
		free(ctx->memo);
		ctx->memo = table;
		ctx->memo_capacity = capacity;
	}
	size_t slot = memo_slot(ctx->memo, ctx->memo_capacity, tag, a, b);
	if (!ctx->memo[slot].tag)
		ctx->memo_count++;
	ctx->memo[slot] = (memo_entry){tag, a, b, result};
}

int expr_memo_new_tag(expr_ctx *ctx)
{
	return ctx->next_tag++;
}

/* ------------------------------------------------------------------ pointer maps */

static size_t map_slot(const void *const *keys, size_t capacity, const void *key)
{
	uintptr_t h = (uintptr_t)key * 0x9e3779b97f4a7c15u;
	size_t slot = (size_t)(h >> 17) & (capacity - 1);
	while (keys[slot] && keys[slot] != key)
		slot = (slot + 1) & (capacity - 1);
	return slot;
}

const expr *expr_map_get(const expr_map *map, const void *key)
{
	if (!map->capacity)
		return NULL;
	size_t slot = map_slot(map->keys, map->capacity, key);
	return map->keys[slot] ? map->values[slot] : NULL;
}

void expr_map_put(expr_map *map, const void *key, const expr *value)
{
	if ((map->count + 1) * 2 >= map->capacity) {
		size_t capacity = map->capacity ? map->capacity * 2 : 64;
		const void **keys = xcalloc(capacity, sizeof *keys);
		const expr **values = xcalloc(capacity, sizeof *values);
		for (size_t i = 0; i < map->capacity; i++) {
			if (!map->keys[i])
				continue;
			size_t slot = map_slot(keys, capacity, map->keys[i]);
			keys[slot] = map->keys[i];
			values[slot] = map->values[i];
		}
		free(map->keys);
		free(map->values);
		map->keys = keys;
		map->values = values;
		map->capacity = capacity;
	}
	size_t slot = map_slot(map->keys, map->capacity, key);
	if (!map->keys[slot])
		map->count++;
	map->keys[slot] = key;
	map->values[slot] = value;
}

void expr_map_free(expr_map *map)
{
	free(map->keys);
	free(map->values);
	memset(map, 0, sizeof *map);
}

/* ------------------------------------------------------------------ numbers, symbols */

const expr *expr_num(expr_ctx *ctx, mpq_srcptr value)
{
	expr candidate = {.kind = EXPR_NUM, .nops = 0};
	/* Borrow the value: intern copies it when the node is new. */
	memcpy(candidate.u.num, value, sizeof(mpq_t));
	return intern(ctx, &candidate);
}

const expr *expr_int(expr_ctx *ctx, long value)
{
	bool small = value >= -16 && value <= 16;
	if (small && ctx->small_ints[value + 16])
		return ctx->small_ints[value + 16];
	size_t mark = ctx->scratch_top;
	mpq_ptr q = scratch_take(ctx);
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
	return intern(ctx, &candidate);
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

expr_kind expr_kind_of(const expr *e) { return e->kind; }
unsigned expr_hash(const expr *e) { return e->hash; }
bool expr_is_num(const expr *e) { return e->kind == EXPR_NUM; }
bool expr_is_zero(const expr *e) { return e->kind == EXPR_NUM && mpq_sgn(e->u.num) == 0; }

bool expr_is_one(const expr *e)
{
	return e->kind == EXPR_NUM && mpq_cmp_ui(e->u.num, 1, 1) == 0;
}

bool expr_is_integer(const expr *e)
{
	return e->kind == EXPR_NUM && rat_is_integer(e->u.num);
}

const __mpq_struct *expr_num_value(const expr *e) { return e->u.num; }
const char *expr_sym_name(const expr *e) { return e->u.sym.name; }
size_t expr_nops(const expr *e) { return e->kind == EXPR_FUN ? 1 : e->nops; }

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

const expr *expr_mul_base(const expr *e, size_t i) { return e->u.mul.bases[i]; }
const expr *expr_mul_exponent(const expr *e, size_t i) { return e->u.mul.exps[i]; }
const __mpq_struct *expr_mul_coef(const expr *e) { return e->u.mul.coef; }
expr_builtin expr_fun_id(const expr *e) { return e->u.fun.fn; }
const expr *expr_fapp_func(const expr *e) { return e->u.fapp.func; }
const unsigned char *expr_fapp_counts(const expr *e) { return e->u.fapp.counts; }

static const struct {
	const char *name, *c_name, *latex;
} builtin_table[EXPR_F_COUNT] = {
#define EXPR_BUILTIN_ROW(id, name, c_name, latex) {name, c_name, latex},
	EXPR_BUILTINS(EXPR_BUILTIN_ROW)
#undef EXPR_BUILTIN_ROW
};

const char *expr_builtin_name(expr_builtin fn) { return builtin_table[fn].name; }
const char *expr_builtin_c_name(expr_builtin fn) { return builtin_table[fn].c_name; }
const char *expr_builtin_latex(expr_builtin fn) { return builtin_table[fn].latex; }

bool expr_builtin_lookup(const char *name, expr_builtin *fn)
{
	for (int i = 0; i < EXPR_F_COUNT; i++)
		if (strcmp(builtin_table[i].name, name) == 0) {
			*fn = (expr_builtin)i;
			return true;
		}
	return false;
}

/* ------------------------------------------------------------------ order */

static int kind_rank(expr_kind kind)
{
	switch (kind) {
	case EXPR_NUM: return 0;
	case EXPR_SYM: return 1;
	case EXPR_FAPP: return 2;
	case EXPR_FUN: return 3;
	case EXPR_MUL: return 4;
	case EXPR_ADD: return 5;
	}
	return 6;
}

int expr_compare(const expr *a, const expr *b)
{
	if (a == b)
		return 0;
	if (a->kind != b->kind)
		return kind_rank(a->kind) < kind_rank(b->kind) ? -1 : 1;
	switch (a->kind) {
	case EXPR_NUM:
		return mpq_cmp(a->u.num, b->u.num);
	case EXPR_SYM:
		return strcmp(a->u.sym.name, b->u.sym.name);
	case EXPR_FUN:
		if (a->u.fun.fn != b->u.fun.fn)
			return a->u.fun.fn < b->u.fun.fn ? -1 : 1;
		return expr_compare(a->u.fun.arg, b->u.fun.arg);
	case EXPR_FAPP: {
		int c = expr_compare(a->u.fapp.func, b->u.fapp.func);
		if (c)
			return c;
		size_t common = a->nops < b->nops ? a->nops : b->nops;
		/* the first differing count decides (memcmp compares unsigned bytes) */
		if (common && (c = memcmp(a->u.fapp.counts, b->u.fapp.counts, common)))
			return c < 0 ? -1 : 1;
		for (size_t i = 0; i < common; i++)
			if (a->u.fapp.args[i] != b->u.fapp.args[i] &&
			    (c = expr_compare(a->u.fapp.args[i], b->u.fapp.args[i])))
				return c;
		return a->nops < b->nops ? -1 : a->nops > b->nops;
	}
	case EXPR_MUL: {
		/* compare from the last (most significant) factor, so x < x*y < y */
		size_t i = a->nops, j = b->nops;
		while (i > 0 && j > 0) {
			i--, j--;
			int c;
			if (a->u.mul.bases[i] != b->u.mul.bases[j] &&
			    (c = expr_compare(a->u.mul.bases[i], b->u.mul.bases[j])))
				return c;
			if (a->u.mul.exps[i] != b->u.mul.exps[j] &&
			    (c = expr_compare(a->u.mul.exps[i], b->u.mul.exps[j])))
				return c;
		}
		if (i != j)
			return i < j ? -1 : 1;
		return mpq_cmp(a->u.mul.coef, b->u.mul.coef);
	}
	case EXPR_ADD: {
		size_t i = a->nops, j = b->nops;
		while (i > 0 && j > 0) {
			i--, j--;
			int c = expr_compare(a->u.add.terms[i], b->u.add.terms[j]);
			if (c)
				return c;
		}
		return i < j ? -1 : i > j;
	}
	}
	return 0;
}

/* A stable natural merge sort with qsort's interface.  The operands of a sum
 * or a product arrive as sorted runs (each canonical operand is sorted
 * already), so few comparisons are needed, and comparisons are structural,
 * not cheap. */
static void run_sort(void *base, size_t n, size_t size, int (*compare)(const void *, const void *))
{
	if (n < 2)
		return;
	_Alignas(max_align_t) char local[2048];
	char *src = base, *buffer = n * size <= sizeof local ? local : xmalloc(n * size), *dst = buffer;
	for (;;) {
		size_t runs = 0, i = 0, out = 0;
		while (i < n) {
			size_t a_end = i + 1;
			while (a_end < n && compare(src + (a_end - 1) * size, src + a_end * size) <= 0)
				a_end++;
			size_t b_end = a_end;
			if (b_end < n) {
				b_end++;
				while (b_end < n && compare(src + (b_end - 1) * size, src + b_end * size) <= 0)
					b_end++;
			}
			size_t x = i, y = a_end;
			while (x < a_end && y < b_end) {
				size_t take = compare(src + y * size, src + x * size) < 0 ? y++ : x++;
				memcpy(dst + out++ * size, src + take * size, size);
			}
			memcpy(dst + out * size, src + x * size, (a_end - x) * size);
			out += a_end - x;
			memcpy(dst + out * size, src + y * size, (b_end - y) * size);
			out += b_end - y;
			i = b_end;
			runs++;
		}
		char *t = src;
		src = dst;
		dst = t;
		if (runs <= 1)
			break;
	}
	if (src != (char *)base)
		memcpy(base, src, n * size);
	if (buffer != local)
		free(buffer);
}

/* ------------------------------------------------------------------ sums */

typedef struct term_pair {
	mpq_ptr coef; /* a scratch rational of the context */
	const expr *rest;
} term_pair;

typedef struct term_list {
	term_pair *items;
	size_t n, cap;
	term_pair inline_items[32];
} term_list;

static int compare_term_pairs(const void *x, const void *y)
{
	return expr_compare(((const term_pair *)x)->rest, ((const term_pair *)y)->rest);
}

/* Make the MUL c*rest where rest is coefficient-free (1, an atom or a MUL). */
static const expr *scaled(expr_ctx *ctx, mpq_srcptr c, const expr *rest)
{
	if (mpq_sgn(c) == 0)
		return ctx->zero;
	if (rest == ctx->one)
		return expr_num(ctx, c);
	if (mpq_cmp_ui(c, 1, 1) == 0)
		return rest;
	expr candidate = {.kind = EXPR_MUL};
	memcpy(candidate.u.mul.coef, c, sizeof(mpq_t));
	const expr *one_exp = ctx->one;
	if (rest->kind == EXPR_MUL) {
		candidate.nops = rest->nops;
		candidate.u.mul.bases = rest->u.mul.bases;
		candidate.u.mul.exps = rest->u.mul.exps;
	} else {
		candidate.nops = 1;
		candidate.u.mul.bases = &rest;
		candidate.u.mul.exps = &one_exp;
	}
	const expr *result = intern(ctx, &candidate);
	if (result && result->kind == EXPR_MUL && !result->u.mul.unit)
		((expr *)result)->u.mul.unit = rest;
	return result;
}

const expr *expr_split_coef(expr_ctx *ctx, const expr *term, mpq_t coef)
{
	if (term->kind == EXPR_NUM) {
		mpq_set(coef, term->u.num);
		return ctx->one;
	}
	if (term->kind != EXPR_MUL) {
		mpq_set_ui(coef, 1, 1);
		return term;
	}
	mpq_set(coef, term->u.mul.coef);
	if (mpq_cmp_ui(coef, 1, 1) == 0)
		return term;
	if (term->u.mul.unit)
		return term->u.mul.unit;
	const expr *rest;
	if (term->nops == 1 && expr_is_one(term->u.mul.exps[0]))
		rest = term->u.mul.bases[0];
	else {
		expr candidate = {.kind = EXPR_MUL, .nops = term->nops};
		memcpy(candidate.u.mul.coef, ctx->one->u.num, sizeof(mpq_t));
		candidate.u.mul.bases = term->u.mul.bases;
		candidate.u.mul.exps = term->u.mul.exps;
		rest = intern(ctx, &candidate);
	}
	if (rest)
		((expr *)term)->u.mul.unit = rest;
	return rest;
}

static void collect_terms(expr_ctx *ctx, const expr *e, term_list *list)
{
	if (e->kind == EXPR_ADD) {
		for (size_t i = 0; i < e->nops; i++)
			collect_terms(ctx, e->u.add.terms[i], list);
		return;
	}
	list->items = grow_items(list->items, list->inline_items, list->n, &list->cap, sizeof *list->items);
	term_pair *pair = &list->items[list->n++];
	pair->coef = scratch_take(ctx);
	pair->rest = expr_split_coef(ctx, e, pair->coef);
}

const expr *expr_add_n(expr_ctx *ctx, size_t n, const expr *const *terms)
{
	for (size_t i = 0; i < n; i++)
		if (!terms[i])
			return NULL;
	if (n == 0)
		return ctx->zero;
	if (n == 1)
		return terms[0];
	size_t mark = ctx->scratch_top;
	term_list list; /* not an initializer, which would clear the inline storage */
	list.items = list.inline_items;
	list.n = 0;
	list.cap = sizeof list.inline_items / sizeof *list.inline_items;
	for (size_t i = 0; i < n; i++)
		collect_terms(ctx, terms[i], &list);
	term_pair *pairs = list.items;
	size_t count = list.n;
	const expr *result = NULL;
	for (size_t i = 0; i < count; i++)
		if (!pairs[i].rest)
			goto out; /* splitting a term hit the node limit: the error is set */
	run_sort(pairs, count, sizeof *pairs, compare_term_pairs);
	/* merge like terms */
	size_t kept = 0;
	for (size_t i = 0; i < count; i++) {
		if (kept > 0 && pairs[kept - 1].rest == pairs[i].rest) {
			rat_add(pairs[kept - 1].coef, pairs[kept - 1].coef, pairs[i].coef);
			continue;
		}
		if (kept != i) {
			mpq_ptr t = pairs[kept].coef;
			pairs[kept] = pairs[i];
			pairs[i].coef = t;
		}
		kept++;
	}
	/* the scaled terms go back into the pairs' rest fields */
	size_t nout = 0;
	bool failed = false;
	for (size_t i = 0; i < kept; i++) {
		if (mpq_sgn(pairs[i].coef) == 0)
			continue;
		const expr *t = scaled(ctx, pairs[i].coef, pairs[i].rest);
		failed |= t == NULL;
		pairs[nout++].rest = t;
	}
	if (failed)
		result = NULL;
	else if (nout == 0)
		result = ctx->zero;
	else if (nout == 1)
		result = pairs[0].rest;
	else {
		const expr *local[32];
		const expr **out = nout <= 32 ? local : xmalloc(nout * sizeof *out);
		for (size_t i = 0; i < nout; i++)
			out[i] = pairs[i].rest;
		expr candidate = {.kind = EXPR_ADD, .nops = nout};
		candidate.u.add.terms = out;
		result = intern(ctx, &candidate);
		if (out != local)
			free(out);
	}
out:
	if (list.items != list.inline_items)
		free(list.items);
	ctx->scratch_top = mark;
	return result;
}

const expr *expr_add(expr_ctx *ctx, const expr *a, const expr *b)
{
	const expr *terms[2] = {a, b};
	return expr_add_n(ctx, 2, terms);
}

const expr *expr_scale(expr_ctx *ctx, const expr *a, mpq_srcptr factor)
{
	const expr *f = expr_num(ctx, factor);
	return expr_mul(ctx, a, f);
}

const expr *expr_neg(expr_ctx *ctx, const expr *a)
{
	return expr_mul(ctx, ctx->minus_one, a);
}

const expr *expr_sub(expr_ctx *ctx, const expr *a, const expr *b)
{
	return expr_add(ctx, a, expr_neg(ctx, b));
}

/* ------------------------------------------------------------------ products */

typedef struct factor {
	const expr *base, *exponent;
} factor;

/* Factors, in the list's own storage until they outgrow it: start a list
 * with factor_list_init and end it with factor_list_free. */
typedef struct factor_list {
	factor *items;
	size_t n, cap;
	factor inline_items[24];
} factor_list;

/* Not an initializer: that would clear the inline storage on every call. */
static void factor_list_init(factor_list *list)
{
	list->items = list->inline_items;
	list->n = 0;
	list->cap = sizeof list->inline_items / sizeof *list->inline_items;
}

static void factor_push(factor_list *list, const expr *base, const expr *exponent)
{
	list->items = grow_items(list->items, list->inline_items, list->n, &list->cap, sizeof *list->items);
	list->items[list->n++] = (factor){base, exponent};
}

static void factor_list_free(factor_list *list)
{
	if (list->items != list->inline_items)
		free(list->items);
}

static int compare_factors(const void *x, const void *y)
{
	return expr_compare(((const factor *)x)->base, ((const factor *)y)->base);
}

/* Intern the MUL c * prod factors (factors sorted, bases distinct, no zero exponents). */
static const expr *make_mul(expr_ctx *ctx, mpq_srcptr c, const factor_list *factors)
{
	if (mpq_sgn(c) == 0)
		return ctx->zero;
	if (factors->n == 0)
		return expr_num(ctx, c);
	if (factors->n == 1 && mpq_cmp_ui(c, 1, 1) == 0 && expr_is_one(factors->items[0].exponent))
		return factors->items[0].base;
	const expr *local[2 * 24];
	const expr **bases = factors->n <= 24 ? local : xmalloc(2 * factors->n * sizeof *bases);
	const expr **exps = bases + factors->n;
	for (size_t i = 0; i < factors->n; i++) {
		bases[i] = factors->items[i].base;
		exps[i] = factors->items[i].exponent;
	}
	expr candidate = {.kind = EXPR_MUL, .nops = factors->n};
	memcpy(candidate.u.mul.coef, c, sizeof(mpq_t));
	candidate.u.mul.bases = bases;
	candidate.u.mul.exps = exps;
	const expr *result = intern(ctx, &candidate);
	if (bases != local)
		free(bases);
	return result;
}

const expr *expr_pow_pair(expr_ctx *ctx, const expr *base, const expr *exponent)
{
	if (!base || !exponent)
		return NULL;
	if (expr_is_zero(exponent))
		return ctx->one;
	if (expr_is_one(exponent))
		return base;
	factor_list list;
	factor_list_init(&list);
	factor_push(&list, base, exponent);
	const expr *result = make_mul(ctx, ctx->one->u.num, &list);
	factor_list_free(&list);
	return result;
}

static bool exponent_too_large(expr_ctx *ctx, const expr *exponent)
{
	if (exponent->kind != EXPR_NUM)
		return false;
	const __mpq_struct *q = exponent->u.num;
	if (mpz_cmpabs_ui(mpq_numref(q), (unsigned long)ctx->limits.max_exponent) > 0 ||
	    mpz_cmp_ui(mpq_denref(q), (unsigned long)ctx->limits.max_exponent) > 0) {
		expr_fail(ctx, EXPR_ERR_EXPONENT, "exponent too large");
		return true;
	}
	return false;
}

static const expr *num_pow(expr_ctx *ctx, const __mpq_struct *q, const __mpq_struct *e);

/* For an integer n > 1 and e = a/r: n = k^r * m with k > 1 found by trial
 * division by small primes gives n^e = k^a * m^e.  Returns false if no k. */
static bool extract_perfect_power(expr_ctx *ctx, const __mpq_struct *n, const __mpq_struct *e,
				  const expr **result)
{
	unsigned long root = mpz_get_ui(mpq_denref(e));
	if (root >= mpz_sizeinbase(mpq_numref(n), 2))
		return false;
	mpz_t rest, k, prime_power;
	mpz_init_set(rest, mpq_numref(n));
	mpz_init_set_ui(k, 1);
	mpz_init(prime_power);
	for (unsigned long prime = 2; prime < 2000; prime += prime == 2 ? 1 : 2) {
		mpz_ui_pow_ui(prime_power, prime, root);
		if (mpz_cmp(prime_power, rest) > 0)
			break;
		while (mpz_divisible_p(rest, prime_power)) {
			mpz_divexact(rest, rest, prime_power);
			mpz_mul_ui(k, k, prime);
		}
	}
	bool found = mpz_cmp_ui(k, 1) > 0;
	if (found) {
		mpq_t kq, restq, integer_exponent;
		mpq_init(kq);
		mpq_init(restq);
		mpq_init(integer_exponent);
		mpq_set_z(kq, k);
		mpq_set_z(restq, rest);
		mpq_set_z(integer_exponent, mpq_numref(e));
		*result = expr_mul(ctx, num_pow(ctx, kq, integer_exponent), num_pow(ctx, restq, e));
		mpq_clear(kq);
		mpq_clear(restq);
		mpq_clear(integer_exponent);
	}
	mpz_clear(rest);
	mpz_clear(k);
	mpz_clear(prime_power);
	return found;
}

/* q^e for rational q and rational e: an exact number where possible, otherwise
 * q^k * q^f with k = floor(e) and 0 < f < 1 (a surd, kept as a factor). */
static const expr *num_pow(expr_ctx *ctx, const __mpq_struct *q, const __mpq_struct *e)
{
	if (rat_is_integer(e)) {
		if (!mpz_fits_slong_p(mpq_numref(e)))
			return expr_fail(ctx, EXPR_ERR_EXPONENT, "exponent too large");
		mpq_t value;
		mpq_init(value);
		const expr *result = NULL;
		if (mpq_sgn(q) == 0 && mpz_sgn(mpq_numref(e)) < 0)
			expr_fail(ctx, EXPR_ERR_DIVISION, "division by zero");
		else if (!rat_pow_int(value, q, mpz_get_si(mpq_numref(e)), ctx->limits.max_bits))
			expr_fail(ctx, EXPR_ERR_EXPONENT, "number too large (power of a number)");
		else
			result = expr_num(ctx, value);
		mpq_clear(value);
		return result;
	}
	if (mpq_sgn(q) == 0)
		return mpq_sgn(e) > 0 ? ctx->zero : expr_fail(ctx, EXPR_ERR_DIVISION, "division by zero");
	if (mpq_cmp_ui(q, 1, 1) == 0)
		return ctx->one;
	if (!mpz_fits_ulong_p(mpq_denref(e)))
		return expr_fail(ctx, EXPR_ERR_EXPONENT, "exponent too large");
	mpq_t root;
	mpq_init(root);
	const expr *result;
	if (mpq_sgn(q) > 0 && rat_root_exact(root, q, mpz_get_ui(mpq_denref(e)))) {
		mpq_t integer_exponent;
		mpq_init(integer_exponent);
		mpq_set_z(integer_exponent, mpq_numref(e));
		result = num_pow(ctx, root, integer_exponent);
		mpq_clear(integer_exponent);
	} else if (mpq_sgn(q) < 0) {
		result = expr_pow_pair(ctx, expr_num(ctx, q), expr_num(ctx, e));
	} else if (!rat_is_integer(q)) {
		/* (a/b)^e = a^e * b^-e, so each surd has an integer base */
		mpq_t part, minus_e;
		mpq_init(part);
		mpq_init(minus_e);
		mpq_neg(minus_e, e);
		mpq_set_z(part, mpq_numref(q));
		const expr *top = num_pow(ctx, part, e);
		mpq_set_z(part, mpq_denref(q));
		const expr *bottom = num_pow(ctx, part, minus_e);
		result = expr_mul(ctx, top, bottom);
		mpq_clear(part);
		mpq_clear(minus_e);
	} else if (extract_perfect_power(ctx, q, e, &result)) {
		/* done: sqrt(8) = 2*sqrt(2) */
	} else {
		/* split e = k + f */
		mpz_t k;
		mpz_init(k);
		mpz_fdiv_q(k, mpq_numref(e), mpq_denref(e));
		mpq_t integer_part, fraction;
		mpq_init(integer_part);
		mpq_init(fraction);
		mpq_set_z(integer_part, k);
		mpq_sub(fraction, e, integer_part);
		const expr *whole = num_pow(ctx, q, integer_part);
		const expr *surd = expr_pow_pair(ctx, expr_num(ctx, q), expr_num(ctx, fraction));
		result = expr_mul(ctx, whole, surd);
		mpq_clear(integer_part);
		mpq_clear(fraction);
		mpz_clear(k);
	}
	mpq_clear(root);
	return result;
}

static bool is_fun(const expr *e, expr_builtin fn)
{
	return e->kind == EXPR_FUN && e->u.fun.fn == fn;
}

static bool is_even_integer(const expr *e)
{
	return expr_is_integer(e) && mpz_even_p(mpq_numref(e->u.num));
}

static bool is_positive_integer(const expr *e)
{
	return expr_is_integer(e) && mpq_sgn(e->u.num) > 0;
}

static bool has_base(const expr *term, const expr *base)
{
	if (term->kind != EXPR_MUL)
		return false;
	for (size_t i = 0; i < term->nops; i++)
		if (term->u.mul.bases[i] == base)
			return true;
	return false;
}

/* Expand the products of the sums in `sums` with `rest` (a non-sum product). */
static const expr *expand_product(expr_ctx *ctx, const expr *rest, const expr **sums, size_t nsums)
{
	size_t nterms = 1;
	const expr **terms = xmalloc(sizeof *terms);
	terms[0] = rest;
	for (size_t s = 0; s < nsums; s++) {
		const expr *sum = sums[s];
		size_t width = sum->kind == EXPR_ADD ? sum->nops : 1;
		if (ctx->limits.max_terms && nterms * width > ctx->limits.max_terms) {
			free(terms);
			return expr_fail(ctx, EXPR_ERR_TOO_LARGE,
					 "expression too large (expansion exceeds the term limit)");
		}
		const expr **next = xmalloc(nterms * width * sizeof *next);
		size_t k = 0;
		for (size_t i = 0; i < nterms; i++) {
			if (expr_poll_interrupt(ctx)) {
				free(next);
				free(terms);
				return NULL;
			}
			if (has_base(terms[i], sum)) {
				/* t*(a+b)^-1 times (a+b): merge the powers, do not distribute */
				next[k++] = expr_mul(ctx, terms[i], sum);
				continue;
			}
			for (size_t j = 0; j < width; j++)
				next[k++] = expr_mul(ctx, terms[i],
						     sum->kind == EXPR_ADD ? sum->u.add.terms[j] : sum);
		}
		free(terms);
		terms = next;
		/* re-collect so later sums multiply merged terms */
		const expr *collected = expr_add_n(ctx, k, terms);
		if (!collected) {
			free(terms);
			return NULL;
		}
		if (collected->kind == EXPR_ADD) {
			nterms = collected->nops;
			terms = xreallocarray(terms, nterms, sizeof *terms);
			memcpy(terms, collected->u.add.terms, nterms * sizeof *terms);
		} else {
			nterms = 1;
			terms[0] = collected;
		}
	}
	const expr *result = expr_add_n(ctx, nterms, terms);
	free(terms);
	return result;
}

const expr *expr_mul_n(expr_ctx *ctx, size_t n, const expr *const *inputs)
{
	for (size_t i = 0; i < n; i++)
		if (!inputs[i])
			return NULL;
	if (n == 0)
		return ctx->one;
	if (n == 1)
		return inputs[0];
	if (expr_poll_interrupt(ctx))
		return NULL;

	size_t mark = ctx->scratch_top;
	mpq_ptr coef = scratch_take(ctx);
	mpq_set_ui(coef, 1, 1);
	factor_list factors;
	factor_list_init(&factors);
	const expr *sums_local[8];
	const expr **sums = sums_local;
	size_t nsums = 0;
	const expr **extras_early = NULL;
	size_t nearly = 0;
	for (size_t i = 0; i < n; i++) {
		const expr *f = inputs[i];
		switch (f->kind) {
		case EXPR_NUM:
			rat_mul(coef, coef, f->u.num);
			break;
		case EXPR_MUL:
			rat_mul(coef, coef, f->u.mul.coef);
			for (size_t j = 0; j < f->nops; j++)
				factor_push(&factors, f->u.mul.bases[j], f->u.mul.exps[j]);
			break;
		case EXPR_ADD:
			if (nsums == 8 && sums == sums_local) {
				sums = xreallocarray(NULL, n, sizeof *sums);
				memcpy(sums, sums_local, sizeof sums_local);
			}
			sums[nsums++] = f;
			break;
		default:
			factor_push(&factors, f, ctx->one);
		}
	}
	const expr *result = NULL;
	if (mpq_sgn(coef) == 0) {
		result = ctx->zero;
		goto done;
	}
	/* a sum that is also the base of a factor merges with it before any
	 * expansion: (a+b)*(a+b)^-1 = 1, not a/(a+b) + b/(a+b) */
	for (size_t k = 0; k < nsums;) {
		size_t j = 0;
		while (j < factors.n && factors.items[j].base != sums[k])
			j++;
		if (j == factors.n) {
			k++;
			continue;
		}
		factors.items[j].exponent = expr_add(ctx, factors.items[j].exponent, ctx->one);
		sums[k] = sums[--nsums];
	}
	if (nsums > 0) {
		const expr *rest;
		if (factors.n == 0)
			rest = expr_num(ctx, coef);
		else {
			const expr **plain = xmalloc((factors.n + 1) * sizeof *plain);
			plain[0] = expr_num(ctx, coef);
			for (size_t i = 0; i < factors.n; i++)
				plain[i + 1] = expr_pow_pair(ctx, factors.items[i].base,
							     factors.items[i].exponent);
			rest = expr_mul_n(ctx, factors.n + 1, plain);
			free(plain);
		}
		result = rest ? expand_product(ctx, rest, sums, nsums) : NULL;
		goto done;
	}

	/* surds with one exponent share a base: sqrt(2)*sqrt(3) = sqrt(6) */
	for (size_t i = 0; i < factors.n; i++) {
		factor *f = &factors.items[i];
		if (f->base->kind != EXPR_NUM || mpq_sgn(f->base->u.num) <= 0 || f->exponent->kind != EXPR_NUM)
			continue;
		for (size_t j = i + 1; j < factors.n; j++) {
			factor *g = &factors.items[j];
			if (g->base->kind != EXPR_NUM || mpq_sgn(g->base->u.num) <= 0 || g->exponent != f->exponent ||
			    g->base == f->base)
				continue;
			mpq_t product;
			mpq_init(product);
			mpq_mul(product, f->base->u.num, g->base->u.num);
			const expr *merged = expr_pow(ctx, expr_num(ctx, product), f->exponent);
			mpq_clear(product);
			/* the merged power comes back through the product as one factor */
			factors.items[j] = factors.items[--factors.n];
			f->base = ctx->one;
			extras_early = xreallocarray(extras_early, nearly + 1, sizeof *extras_early);
			extras_early[nearly++] = merged;
			break;
		}
	}
	if (nearly > 0) {
		/* drop the factors whose base became 1 and multiply the merged surds in */
		size_t kept = 0;
		for (size_t i = 0; i < factors.n; i++)
			if (factors.items[i].base != ctx->one)
				factors.items[kept++] = factors.items[i];
		factors.n = kept;
		const expr **parts = xmalloc((factors.n + nearly + 1) * sizeof *parts);
		size_t np = 0;
		parts[np++] = expr_num(ctx, coef);
		for (size_t i = 0; i < factors.n; i++)
			parts[np++] = expr_pow_pair(ctx, factors.items[i].base, factors.items[i].exponent);
		for (size_t i = 0; i < nearly; i++)
			parts[np++] = extras_early[i];
		result = expr_mul_n(ctx, np, parts);
		free(parts);
		free(extras_early);
		goto done;
	}

	/* merge equal bases; fold exp factors into one exp */
	run_sort(factors.items, factors.n, sizeof *factors.items, compare_factors);
	factor_list merged;
	factor_list_init(&merged);
	const expr **exp_args = NULL;
	size_t nexp = 0;
	const expr **extras = NULL;
	size_t nextras = 0;
	for (size_t i = 0; i < factors.n; i++) {
		const expr *base = factors.items[i].base;
		const expr *exponent = factors.items[i].exponent;
		bool was_merged = false;
		while (i + 1 < factors.n && factors.items[i + 1].base == base) {
			exponent = expr_add(ctx, exponent, factors.items[++i].exponent);
			was_merged = true;
		}
		if (!exponent) {
			factor_list_free(&merged);
			free(exp_args);
			free(extras);
			goto done;
		}
		if (expr_is_zero(exponent))
			continue;
		if (is_fun(base, EXPR_F_EXP)) {
			/* exp(u)^e = exp(e*u); exp(a)*exp(b) = exp(a+b) */
			exp_args = xreallocarray(exp_args, nexp + 1, sizeof *exp_args);
			exp_args[nexp++] = expr_mul(ctx, exponent, base->u.fun.arg);
			continue;
		}
		/* a surd q^f with q > 0, 0 < f < 1 is already in final form */
		bool stable_surd = base->kind == EXPR_NUM && !was_merged && mpq_sgn(base->u.num) > 0 &&
				   exponent->kind == EXPR_NUM && mpq_sgn(exponent->u.num) > 0 &&
				   mpq_cmp_ui(exponent->u.num, 1, 1) < 0;
		bool negative_surd = base->kind == EXPR_NUM && !was_merged && mpq_sgn(base->u.num) < 0 &&
				     !expr_is_integer(exponent);
		/* q^x with a symbolic x stays a factor: only numeric powers of numbers fold */
		bool rewrite = (base->kind == EXPR_NUM && exponent->kind == EXPR_NUM && !stable_surd && !negative_surd) ||
			       (base->kind == EXPR_ADD && is_positive_integer(exponent)) ||
			       (is_fun(base, EXPR_F_ABS) && is_even_integer(exponent)) ||
			       (base->kind == EXPR_MUL && was_merged);
		if (rewrite) {
			extras = xreallocarray(extras, nextras + 1, sizeof *extras);
			extras[nextras++] = expr_pow(ctx, base, exponent);
			continue;
		}
		factor_push(&merged, base, exponent);
	}
	if (nexp > 0) {
		const expr *exp_factor = expr_fun(ctx, EXPR_F_EXP, expr_add_n(ctx, nexp, exp_args));
		if (exp_factor && is_fun(exp_factor, EXPR_F_EXP)) {
			factor_push(&merged, exp_factor, ctx->one);
			run_sort(merged.items, merged.n, sizeof *merged.items, compare_factors);
		} else {
			extras = xreallocarray(extras, nextras + 1, sizeof *extras);
			extras[nextras++] = exp_factor;
		}
	}
	free(exp_args);
	result = make_mul(ctx, coef, &merged);
	factor_list_free(&merged);
	if (nextras > 0 && result) {
		extras = xreallocarray(extras, nextras + 1, sizeof *extras);
		extras[nextras++] = result;
		result = expr_mul_n(ctx, nextras, extras);
	}
	free(extras);
done:
	ctx->scratch_top = mark;
	factor_list_free(&factors);
	if (sums != sums_local)
		free(sums);
	return result;
}

const expr *expr_mul(expr_ctx *ctx, const expr *a, const expr *b)
{
	const expr *factors[2] = {a, b};
	return expr_mul_n(ctx, 2, factors);
}

/* term / m for a monomial m whose factors all occur in term: the exponents
 * are subtracted directly (the printer divides every term of a sum by a
 * common factor, and a full product would re-sort and re-merge each one).
 * NULL when the shortcut does not apply; then the caller divides normally. */
static const expr *divide_exactly(expr_ctx *ctx, const expr *term, const expr *m)
{
	const expr *one_exp = ctx->one;
	const expr *const *mb = m->kind == EXPR_MUL ? m->u.mul.bases : &m;
	const expr *const *me = m->kind == EXPR_MUL ? m->u.mul.exps : &one_exp;
	size_t mn = m->kind == EXPR_MUL ? m->nops : 1;
	const expr *const *tb = term->kind == EXPR_MUL ? term->u.mul.bases : &term;
	const expr *const *te = term->kind == EXPR_MUL ? term->u.mul.exps : &one_exp;
	size_t tn = term->kind == EXPR_MUL ? term->nops : 1;
	factor_list kept;
	factor_list_init(&kept);
	size_t j = 0;
	const expr *result = NULL;
	for (size_t i = 0; i < tn; i++) {
		const expr *exponent = te[i];
		if (j < mn && mb[j] == tb[i]) {
			if (exponent->kind != EXPR_NUM || me[j]->kind != EXPR_NUM)
				goto out;
			exponent = expr_sub(ctx, exponent, me[j]);
			j++;
			if (expr_is_zero(exponent))
				continue;
			/* a power left over on these bases may need the full rules */
			if (tb[i]->kind == EXPR_NUM || tb[i]->kind == EXPR_ADD || is_fun(tb[i], EXPR_F_EXP) ||
			    is_fun(tb[i], EXPR_F_ABS))
				goto out;
		}
		factor_push(&kept, tb[i], exponent);
	}
	if (j == mn) {
		size_t mark = ctx->scratch_top;
		mpq_ptr coef = scratch_take(ctx);
		if (term->kind == EXPR_MUL)
			mpq_set(coef, term->u.mul.coef);
		else
			mpq_set_ui(coef, 1, 1);
		if (m->kind == EXPR_MUL)
			rat_div(coef, coef, m->u.mul.coef);
		result = make_mul(ctx, coef, &kept);
		ctx->scratch_top = mark;
	}
out:
	factor_list_free(&kept);
	return result;
}

const expr *expr_div_terms(expr_ctx *ctx, const expr *sum, const expr *m)
{
	if (!sum || !m || sum->kind != EXPR_ADD || (m->kind != EXPR_MUL && m->kind != EXPR_SYM &&
						    m->kind != EXPR_FUN && m->kind != EXPR_FAPP))
		return expr_div(ctx, sum, m);
	const expr **terms = xmalloc(sum->nops * sizeof *terms);
	for (size_t i = 0; i < sum->nops; i++) {
		terms[i] = divide_exactly(ctx, sum->u.add.terms[i], m);
		if (!terms[i]) {
			free(terms);
			return expr_div(ctx, sum, m);
		}
	}
	const expr *result = expr_add_n(ctx, sum->nops, terms);
	free(terms);
	return result;
}

const expr *expr_div(expr_ctx *ctx, const expr *a, const expr *b)
{
	if (!a || !b)
		return NULL;
	if (expr_is_zero(b))
		return expr_fail(ctx, EXPR_ERR_DIVISION, "division by zero");
	return expr_mul(ctx, a, expr_pow(ctx, b, ctx->minus_one));
}

/* ------------------------------------------------------------------ powers */

/* The positive rational content g of a sum (gcd of numerators over lcm of
 * denominators), negated when flip_sign and the leading term is negative. */
static void sum_content(const expr *sum, bool flip_sign, mpq_t g)
{
	mpz_t num, den;
	mpz_init(num);
	mpz_init_set_ui(den, 1);
	mpq_t c;
	mpq_init(c);
	for (size_t i = 0; i < sum->nops; i++) {
		const expr *term = sum->u.add.terms[i];
		if (term->kind == EXPR_NUM)
			mpq_set(c, term->u.num);
		else if (term->kind == EXPR_MUL)
			mpq_set(c, term->u.mul.coef);
		else
			mpq_set_ui(c, 1, 1);
		mpz_gcd(num, num, mpq_numref(c));
		mpz_lcm(den, den, mpq_denref(c));
	}
	mpq_set_num(g, num);
	mpq_set_den(g, den);
	mpq_canonicalize(g);
	if (flip_sign && simp_negative_form(sum))
		mpq_neg(g, g);
	mpq_clear(c);
	mpz_clear(num);
	mpz_clear(den);
}

static const expr *pow_sum(expr_ctx *ctx, const expr *sum, const expr *exponent)
{
	const __mpq_struct *e = exponent->u.num;
	if (is_positive_integer(exponent)) {
		/* (a+b)^n expanded: refuse when the multinomial count is too large */
		unsigned long power = mpz_get_ui(mpq_numref(e));
		double count = 1;
		for (unsigned long k = 1; k < sum->nops && count <= 1e12; k++)
			count = count * (double)(power + k) / (double)k;
		if (ctx->limits.max_terms && count > (double)ctx->limits.max_terms)
			return expr_fail(ctx, EXPR_ERR_TOO_LARGE,
					 "expression too large (expanding this power exceeds the term limit)");
		const expr *result = ctx->one, *square = sum;
		while (power > 0 && result) {
			if (power & 1)
				result = expr_mul(ctx, result, square);
			power >>= 1;
			if (power)
				square = expr_mul(ctx, square, square);
		}
		return result;
	}
	mpq_t g;
	mpq_init(g);
	sum_content(sum, rat_is_integer(e), g);
	const expr *result;
	if (mpq_cmp_ui(g, 1, 1) == 0) {
		result = expr_pow_pair(ctx, sum, exponent);
	} else {
		mpq_t inverse;
		mpq_init(inverse);
		mpq_inv(inverse, g);
		const expr *primitive = expr_scale(ctx, sum, inverse);
		result = expr_mul(ctx, num_pow(ctx, g, e), expr_pow_pair(ctx, primitive, exponent));
		mpq_clear(inverse);
	}
	mpq_clear(g);
	return result;
}

/* (c * prod b_i^e_i)^e for a rational e. */
static const expr *pow_mul(expr_ctx *ctx, const expr *product, const expr *exponent)
{
	const __mpq_struct *e = exponent->u.num;
	bool integer = rat_is_integer(e);
	const __mpq_struct *c = product->u.mul.coef;
	if (!integer && mpq_sgn(c) < 0) {
		/* (-x)^(1/2) cannot be split; keep it whole (after making the rest positive) */
		return expr_pow_pair(ctx, product, exponent);
	}
	if (!integer) {
		/* (x*y)^e = x^e*y^e for fractional e needs x, y >= 0; one factor of
		 * unknown sign is fine (the others are >= 0, so the domain makes it
		 * >= 0 too), two are not: (a*b)^(1/2) is real for a, b < 0 */
		size_t unknown = 0;
		for (size_t i = 0; i < product->nops; i++) {
			const expr *inner = product->u.mul.exps[i];
			if (inner->kind == EXPR_NUM && (!rat_is_integer(inner->u.num) ||
							 mpz_even_p(mpq_numref(inner->u.num))))
				continue; /* x^f with f fractional, or x^2k: >= 0 */
			if (expr_sign(ctx, product->u.mul.bases[i]) & EXPR_SIGN_NEG)
				unknown++;
		}
		if (unknown > 1)
			return expr_pow_pair(ctx, product, exponent);
	}
	const expr **parts = xmalloc((product->nops + 1) * sizeof *parts);
	parts[0] = num_pow(ctx, c, e);
	for (size_t i = 0; i < product->nops; i++) {
		const expr *base = product->u.mul.bases[i];
		const expr *inner = product->u.mul.exps[i];
		const expr *combined = expr_mul(ctx, inner, exponent);
		/* (x^2k)^e = abs(x)^(2k*e) for fractional e unless x >= 0 */
		if (!integer && is_even_integer(inner) && (expr_sign(ctx, base) & EXPR_SIGN_NEG))
			base = expr_fun(ctx, EXPR_F_ABS, base);
		parts[i + 1] = expr_pow(ctx, base, combined);
	}
	const expr *result = expr_mul_n(ctx, product->nops + 1, parts);
	free(parts);
	return result;
}

const expr *expr_pow(expr_ctx *ctx, const expr *base, const expr *exponent)
{
	if (!base || !exponent)
		return NULL;
	if (expr_is_zero(exponent))
		return ctx->one;
	if (expr_is_one(exponent))
		return base;
	if (exponent_too_large(ctx, exponent))
		return NULL;
	if (exponent->kind == EXPR_NUM) {
		switch (base->kind) {
		case EXPR_NUM:
			return num_pow(ctx, base->u.num, exponent->u.num);
		case EXPR_ADD:
			return pow_sum(ctx, base, exponent);
		case EXPR_MUL:
			return pow_mul(ctx, base, exponent);
		case EXPR_FUN:
			if (base->u.fun.fn == EXPR_F_EXP)
				return expr_fun(ctx, EXPR_F_EXP, expr_mul(ctx, exponent, base->u.fun.arg));
			/* abs(x)^2k = x^2k */
			if (base->u.fun.fn == EXPR_F_ABS && is_even_integer(exponent))
				return expr_pow(ctx, base->u.fun.arg, exponent);
			return expr_pow_pair(ctx, base, exponent);
		default:
			return expr_pow_pair(ctx, base, exponent);
		}
	}
	/* symbolic exponent */
	if (expr_is_one(base))
		return ctx->one;
	if (is_fun(base, EXPR_F_EXP))
		return expr_fun(ctx, EXPR_F_EXP, expr_mul(ctx, exponent, base->u.fun.arg));
	if (base->kind == EXPR_MUL) {
		/* (x^a)^b = x^(a*b) for x > 0; (x*y)^b = x^b*y^b for x, y > 0 */
		bool positive = mpq_sgn(base->u.mul.coef) > 0;
		for (size_t i = 0; i < base->nops && positive; i++)
			positive = expr_sign(ctx, base->u.mul.bases[i]) == EXPR_SIGN_POS ||
				   (base->u.mul.exps[i]->kind == EXPR_NUM &&
				    !rat_is_integer(base->u.mul.exps[i]->u.num));
		if (positive) {
			const expr **parts = xmalloc((base->nops + 1) * sizeof *parts);
			parts[0] = expr_pow_pair(ctx, expr_num(ctx, base->u.mul.coef), exponent);
			if (mpq_cmp_ui(base->u.mul.coef, 1, 1) == 0)
				parts[0] = ctx->one;
			for (size_t i = 0; i < base->nops; i++)
				parts[i + 1] = expr_pow(ctx, base->u.mul.bases[i],
							expr_mul(ctx, base->u.mul.exps[i], exponent));
			const expr *result = expr_mul_n(ctx, base->nops + 1, parts);
			free(parts);
			return result;
		}
	}
	return expr_pow_pair(ctx, base, exponent);
}

const expr *expr_pow_rat(expr_ctx *ctx, const expr *base, long num, long den)
{
	return expr_pow(ctx, base, expr_rat(ctx, num, den));
}

/* ------------------------------------------------------------------ functions */

const expr *expr_fun_raw(expr_ctx *ctx, expr_builtin fn, const expr *arg)
{
	if (!arg)
		return NULL;
	expr candidate = {.kind = EXPR_FUN, .nops = 1};
	candidate.u.fun.fn = fn;
	candidate.u.fun.arg = arg;
	return intern(ctx, &candidate);
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
	return intern(ctx, &candidate);
}

/* ------------------------------------------------------------------ traversals */

void expr_vec_push(expr_vec *vec, const expr *e)
{
	if (vec->n == vec->cap) {
		vec->cap = vec->cap ? vec->cap * 2 : 8;
		vec->items = xreallocarray(vec->items, vec->cap, sizeof *vec->items);
	}
	vec->items[vec->n++] = e;
}

void expr_vec_free(expr_vec *vec)
{
	free(vec->items);
	memset(vec, 0, sizeof *vec);
}

static void children(const expr *e, expr_vec *out)
{
	switch (e->kind) {
	case EXPR_ADD:
		for (size_t i = 0; i < e->nops; i++)
			expr_vec_push(out, e->u.add.terms[i]);
		break;
	case EXPR_MUL:
		for (size_t i = 0; i < e->nops; i++) {
			expr_vec_push(out, e->u.mul.bases[i]);
			expr_vec_push(out, e->u.mul.exps[i]);
		}
		break;
	case EXPR_FUN:
		expr_vec_push(out, e->u.fun.arg);
		break;
	case EXPR_FAPP:
		for (size_t i = 0; i < e->nops; i++)
			expr_vec_push(out, e->u.fapp.args[i]);
		break;
	default:
		break;
	}
}

/* expr_has memo tag: negative, so never one of expr_memo_new_tag's. */
enum { HAS_TAG = -1 };

bool expr_has(expr_ctx *ctx, const expr *e, const expr *sym)
{
	if (e == sym)
		return true;
	if (e->kind == EXPR_NUM || e->kind == EXPR_SYM)
		return false;
	const expr *known = expr_memo_get(ctx, HAS_TAG, e, sym);
	if (known)
		return known == ctx->one;
	bool found = false;
	switch (e->kind) {
	case EXPR_ADD:
		for (size_t i = 0; i < e->nops && !found; i++)
			found = expr_has(ctx, e->u.add.terms[i], sym);
		break;
	case EXPR_MUL:
		for (size_t i = 0; i < e->nops && !found; i++)
			found = expr_has(ctx, e->u.mul.bases[i], sym) || expr_has(ctx, e->u.mul.exps[i], sym);
		break;
	case EXPR_FUN:
		found = expr_has(ctx, e->u.fun.arg, sym);
		break;
	case EXPR_FAPP:
		for (size_t i = 0; i < e->nops && !found; i++)
			found = expr_has(ctx, e->u.fapp.args[i], sym);
		break;
	default:
		break;
	}
	expr_memo_put(ctx, HAS_TAG, e, sym, found ? ctx->one : ctx->zero);
	return found;
}

static void collect_symbols(const expr *e, expr_map *seen, expr_vec *out)
{
	if (expr_map_get(seen, e))
		return;
	expr_map_put(seen, e, e);
	if (e->kind == EXPR_SYM) {
		expr_vec_push(out, e);
		return;
	}
	expr_vec kids = {0};
	children(e, &kids);
	for (size_t i = 0; i < kids.n; i++)
		collect_symbols(kids.items[i], seen, out);
	expr_vec_free(&kids);
}

void expr_free_symbols(expr_ctx *ctx, const expr *e, expr_vec *out)
{
	(void)ctx;
	expr_map seen = {0};
	collect_symbols(e, &seen, out);
	expr_map_free(&seen);
}

static size_t count_nodes(const expr *e, expr_map *seen)
{
	if (expr_map_get(seen, e))
		return 0;
	expr_map_put(seen, e, e);
	size_t total = 1;
	expr_vec kids = {0};
	children(e, &kids);
	for (size_t i = 0; i < kids.n; i++)
		total += count_nodes(kids.items[i], seen);
	expr_vec_free(&kids);
	return total;
}

size_t expr_size(const expr *e)
{
	expr_map seen = {0};
	size_t total = count_nodes(e, &seen);
	expr_map_free(&seen);
	return total;
}

typedef struct rebuild_job {
	expr_leaf_fn leaf;
	void *data;
	expr_map memo;
} rebuild_job;

static const expr *rebuild_rec(expr_ctx *ctx, const expr *e, rebuild_job *job)
{
	if (!e)
		return NULL;
	if (e->kind == EXPR_SYM)
		return job->leaf ? job->leaf(e, job->data) : e;
	if (e->kind == EXPR_NUM)
		return e;
	const expr *known = expr_map_get(&job->memo, e);
	if (known)
		return known;
	if (expr_poll_interrupt(ctx))
		return NULL;
	const expr *result = NULL;
	switch (e->kind) {
	case EXPR_ADD: {
		const expr **terms = xmalloc(e->nops * sizeof *terms);
		for (size_t i = 0; i < e->nops; i++)
			terms[i] = rebuild_rec(ctx, e->u.add.terms[i], job);
		result = expr_add_n(ctx, e->nops, terms);
		free(terms);
		break;
	}
	case EXPR_MUL: {
		const expr **parts = xmalloc((e->nops + 1) * sizeof *parts);
		parts[0] = expr_num(ctx, e->u.mul.coef);
		for (size_t i = 0; i < e->nops; i++)
			parts[i + 1] = expr_pow(ctx, rebuild_rec(ctx, e->u.mul.bases[i], job),
						rebuild_rec(ctx, e->u.mul.exps[i], job));
		result = expr_mul_n(ctx, e->nops + 1, parts);
		free(parts);
		break;
	}
	case EXPR_FUN:
		result = expr_fun(ctx, e->u.fun.fn, rebuild_rec(ctx, e->u.fun.arg, job));
		break;
	case EXPR_FAPP: {
		const expr *args[EXPR_MAX_FUNC_ARGS];
		for (size_t i = 0; i < e->nops; i++)
			args[i] = rebuild_rec(ctx, e->u.fapp.args[i], job);
		result = expr_fapp(ctx, e->u.fapp.func, e->u.fapp.counts, args);
		break;
	}
	default:
		result = e;
	}
	if (result)
		expr_map_put(&job->memo, e, result);
	return result;
}

const expr *expr_rebuild(expr_ctx *ctx, const expr *e, expr_leaf_fn leaf, void *data)
{
	if (!e)
		return NULL;
	rebuild_job job = {.leaf = leaf, .data = data};
	const expr *result = rebuild_rec(ctx, e, &job);
	expr_map_free(&job.memo);
	return result;
}

typedef struct substitution {
	size_t n;
	const expr *const *olds;
	const expr *const *news;
} substitution;

static const expr *substitute_leaf(const expr *sym, void *data)
{
	const substitution *sub = data;
	for (size_t i = 0; i < sub->n; i++)
		if (sym == sub->olds[i])
			return sub->news[i];
	return sym;
}

const expr *expr_subst(expr_ctx *ctx, const expr *e, size_t n, const expr *const *olds,
		       const expr *const *news)
{
	for (size_t i = 0; i < n; i++)
		if (!olds[i] || !news[i])
			return NULL;
	substitution sub = {n, olds, news};
	return expr_rebuild(ctx, e, substitute_leaf, &sub);
}
