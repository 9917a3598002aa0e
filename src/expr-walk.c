/* expr-walk.c - pointer maps and the walks over a tree: containment, free
 * symbols, size, rebuilding through the constructors, substitution.
 */
#include "expr-internal.h"

#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include "xalloc.h"

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
	expr_fapp_fn fapp;
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
		bool complete = true;
		for (size_t i = 0; i < e->nops; i++) {
			args[i] = rebuild_rec(ctx, e->u.fapp.args[i], job);
			complete = complete && args[i];
		}
		if (!complete)
			break;
		result = job->fapp ? job->fapp(ctx, e, args, job->data) : NULL;
		if (!result && !expr_error(ctx))
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

const expr *expr_rebuild_fapp(expr_ctx *ctx, const expr *e, expr_fapp_fn fapp, void *data)
{
	if (!e)
		return NULL;
	rebuild_job job = {.fapp = fapp, .data = data};
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
