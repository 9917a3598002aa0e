/* expr-intern.c - the context: hash-consing, the arena, scratch numbers, errors
 * and limits, and the memo of (tag, a, b) -> node.
 *
 * Every constructor normalises before interning, so the intern table only ever
 * holds canonical nodes and equality is pointer equality.
 */
#include "expr-internal.h"

#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "xalloc.h"

typedef struct expr_memo_entry {
	int tag;
	const void *a, *b;
	const expr *result;
} memo_entry;

typedef struct expr_arena_chunk {
	struct expr_arena_chunk *prev;
	max_align_t data[];
} arena_chunk;

enum { ARENA_MIN = 64 * 1024, ARENA_MAX = 4 * 1024 * 1024 };

/* bytes of node storage, aligned for any type */
static void *arena_alloc(expr_ctx *ctx, size_t bytes)
{
	const size_t align = sizeof(max_align_t);
	bytes = (bytes + align - 1) / align * align;
	if (bytes > ctx->arena_left) {
		size_t size =
		        ctx->arena
		                ? 2 * (size_t)(ctx->arena_next + ctx->arena_left - (char *)ctx->arena->data)
		                : ARENA_MIN;
		size = size > ARENA_MAX ? ARENA_MAX : size;
		size = size < bytes ? bytes : size;
		arena_chunk *chunk = xmalloc(sizeof *chunk + size);
		ctx->bytes += sizeof *chunk + size;
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

void expr_scratch_grow(expr_ctx *ctx)
{
	size_t cap = ctx->scratch_cap ? ctx->scratch_cap * 2 : 64;
	ctx->scratch = xreallocarray(ctx->scratch, cap, sizeof *ctx->scratch);
	for (size_t i = ctx->scratch_cap; i < cap; i++) {
		ctx->scratch[i] = xmalloc(sizeof(__mpq_struct));
		mpq_init(ctx->scratch[i]);
	}
	ctx->scratch_cap = cap;
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
	ctx->bytes += (capacity - ctx->capacity) * sizeof *table;
	ctx->table = table;
	ctx->capacity = capacity;
}

static void *copy_bytes(void *dst, const void *src, size_t size)
{
	if (size)
		memcpy(dst, src, size);
	return dst;
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
const expr *expr_intern(expr_ctx *ctx, expr *candidate)
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
	if (ctx->limits.max_bytes && ctx->bytes >= ctx->limits.max_bytes)
		return expr_fail(ctx, EXPR_ERR_MEMORY, "memory budget of the expressions spent");
	candidate->height = node_height(candidate);
	if (ctx->limits.max_height && candidate->height > ctx->limits.max_height)
		return expr_fail(ctx, EXPR_ERR_DEPTH,
		                 "expression nested too deeply (tree depth limit reached)");
	/* one block in the arena: the node, its operand arrays, the limbs of
	 * its number (read-only GMP numbers over them: nodes never change) */
	size_t n = candidate->nops, extra = 0;
	if (candidate->kind == EXPR_ADD)
		extra = n * sizeof(expr *);
	else if (candidate->kind == EXPR_MUL)
		extra = 2 * n * sizeof(expr *);
	else if (candidate->kind == EXPR_FAPP)
		extra = n * sizeof(expr *) + n;
	mpq_srcptr number = candidate->kind == EXPR_NUM   ? candidate->u.num
	                    : candidate->kind == EXPR_MUL ? candidate->u.mul.coef
	                                                  : NULL;
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
	ctx->journal_depth = 0;
	expr_journal_free(ctx);
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

size_t expr_ctx_bytes(const expr_ctx *ctx)
{
	return ctx->bytes;
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
	ctx->error_nodes[0] = ctx->error_nodes[1] = NULL;
}

bool expr_clear_recoverable(expr_ctx *ctx)
{
	if (ctx->error != EXPR_ERR_INTERRUPTED)
		expr_clear_error(ctx);
	return ctx->error == EXPR_OK;
}

const expr *expr_fail_at(expr_ctx *ctx, expr_error_kind kind, const char *template, const expr *a,
			 const expr *b)
{
	if (!ctx->error) {
		expr_fail(ctx, kind, template);
		ctx->error_nodes[0] = a;
		ctx->error_nodes[1] = b;
	}
	return NULL;
}

bool expr_error_nodes(const expr_ctx *ctx, const expr **a, const expr **b)
{
	*a = ctx->error_nodes[0];
	*b = ctx->error_nodes[1];
	return ctx->error && *a && *b;
}

const expr *expr_fail(expr_ctx *ctx, expr_error_kind kind, const char *message)
{
	if (!ctx->error) {
		ctx->error = kind;
		snprintf(ctx->message, sizeof ctx->message, "%s", message);
	}
	return NULL;
}

_Static_assert(sizeof ((expr_held *)0)->message == sizeof ((struct expr_ctx *)0)->message,
               "expr_held keeps the whole message");

void expr_hold(expr_ctx *ctx, expr_held *held)
{
	held->limits = ctx->limits;
	held->error = ctx->error;
	memcpy(held->message, ctx->message, sizeof held->message);
	held->nodes[0] = ctx->error_nodes[0];
	held->nodes[1] = ctx->error_nodes[1];
	/* the limits on size and the interrupt; those on exponents and bits
	 * decide what a power becomes, so they stay */
	ctx->limits.max_nodes = 0;
	ctx->limits.max_bytes = 0;
	ctx->limits.max_height = 0;
	ctx->limits.max_terms = 0;
	ctx->limits.interrupt = NULL;
	expr_clear_error(ctx);
}

void expr_release(expr_ctx *ctx, const expr_held *held)
{
	ctx->limits = held->limits;
	ctx->error = held->error;
	memcpy(ctx->message, held->message, sizeof ctx->message);
	ctx->error_nodes[0] = held->nodes[0];
	ctx->error_nodes[1] = held->nodes[1];
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

static size_t memo_slot(const memo_entry *table, size_t capacity, int tag, const void *a, const void *b)
{
	uintptr_t h = (uintptr_t)a * 0x9e3779b97f4a7c15u ^ (uintptr_t)b * 0xc2b2ae3d27d4eb4fu ^
	              (uintptr_t)tag * 0x165667b1u;
	h ^= h >> 29;
	size_t slot = (size_t)h & (capacity - 1);
	while (table[slot].tag && !(table[slot].tag == tag && table[slot].a == a && table[slot].b == b))
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
		ctx->bytes += (capacity - ctx->memo_capacity) * sizeof *table;
		ctx->memo = table;
		ctx->memo_capacity = capacity;
	}
	size_t slot = memo_slot(ctx->memo, ctx->memo_capacity, tag, a, b);
	if (!ctx->memo[slot].tag)
		ctx->memo_count++;
	ctx->memo[slot] = (memo_entry){tag, a, b, result};
}

void expr_memo_clear(expr_ctx *ctx)
{
	if (ctx->memo_count)
		memset(ctx->memo, 0, ctx->memo_capacity * sizeof *ctx->memo);
	ctx->memo_count = 0;
}

int expr_memo_new_tag(expr_ctx *ctx)
{
	return ctx->next_tag++;
}
