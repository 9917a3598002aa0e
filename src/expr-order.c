/* expr-order.c - the total order of nodes (structural, independent of creation
 * history), and the sort the constructors use for their operands.
 */
#include "expr-internal.h"

#include <stddef.h>
#include <stdlib.h>
#include <string.h>

#include "xalloc.h"

static int kind_rank(expr_kind kind)
{
	switch (kind) {
	case EXPR_NUM:
		return 0;
	case EXPR_SYM:
		return 1;
	case EXPR_FAPP:
		return 2;
	case EXPR_FUN:
		return 3;
	case EXPR_MUL:
		return 4;
	case EXPR_ADD:
		return 5;
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
void expr_run_sort(void *base, size_t n, size_t size, int (*compare)(const void *, const void *))
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
				while (b_end < n &&
				       compare(src + (b_end - 1) * size, src + b_end * size) <= 0)
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
