/* model.c - the tables of a model. */
#include "model.h"

#include <stdlib.h>
#include <string.h>

#include "xalloc.h"

void model_init(model *m, expr_ctx *ctx)
{
	memset(m, 0, sizeof *m);
	m->ctx = ctx;
	m->time = expr_sym(ctx, "t");
	/* time runs from 0: log(S + t) is smooth where a positive S can go */
	expr_sym_set_sign(ctx, m->time, EXPR_SIGN_NONNEG);
}

void model_free(model *m)
{
	for (size_t i = 0; i < m->nentries; i++)
		free(m->entries[i].name);
	free(m->entries);
	free(m->name_index);
	free(m->noises);
	free(m->corr);
	for (size_t i = 0; i < m->nsdes; i++)
		free(m->sdes[i].diffusion);
	free(m->sdes);
	for (size_t i = 0; i < m->nmeasures; i++) {
		free(m->measures[i].name);
		free(m->measures[i].names);
		free(m->measures[i].shift);
	}
	free(m->measures);
	free(m->relations);
	memset(m, 0, sizeof *m);
}

static size_t name_hash(const char *name)
{
	size_t h = 14695981039346656037u;
	for (; *name; name++)
		h = (h ^ (unsigned char)*name) * 1099511628211u;
	return h;
}

/* The slot of name in the index: its entry, or the empty slot where it goes. */
static size_t name_slot(const model *m, const char *name)
{
	size_t mask = m->name_index_cap - 1, slot = name_hash(name) & mask;
	while (m->name_index[slot] && strcmp(m->entries[m->name_index[slot] - 1].name, name) != 0)
		slot = (slot + 1) & mask;
	return slot;
}

/* Rebuild the index for the current entries, at most half full. */
static void reindex(model *m)
{
	size_t cap = 64;
	while (cap < 2 * (m->nentries + 1))
		cap *= 2;
	free(m->name_index);
	m->name_index = xcalloc(cap, sizeof *m->name_index);
	m->name_index_cap = cap;
	for (size_t i = 0; i < m->nentries; i++)
		m->name_index[name_slot(m, m->entries[i].name)] = i + 1;
}

model_entry *model_lookup(model *m, const char *name)
{
	if (m->nentries == 0)
		return NULL;
	size_t slot = name_slot(m, name);
	return m->name_index[slot] ? &m->entries[m->name_index[slot] - 1] : NULL;
}

model_entry *model_add(model *m, const char *name, model_kind kind, const expr *sym)
{
	model_entry *entry = model_lookup(m, name);
	if (!entry) {
		if (m->nentries == m->capentries) {
			m->capentries = m->capentries ? m->capentries * 2 : 16;
			m->entries = xreallocarray(m->entries, m->capentries, sizeof *m->entries);
		}
		entry = &m->entries[m->nentries++];
		memset(entry, 0, sizeof *entry);
		entry->name = xstrdup(name);
		if (2 * (m->nentries + 1) > m->name_index_cap)
			reindex(m);
		else
			m->name_index[name_slot(m, name)] = m->nentries;
	}
	entry->kind = kind;
	entry->sym = sym;
	return entry;
}

void model_forget(model *m, model_entry *entry)
{
	size_t index = (size_t)(entry - m->entries);
	free(entry->name);
	memmove(entry, entry + 1, (m->nentries - index - 1) * sizeof *entry);
	m->nentries--;
	reindex(m);
}

const char *model_kind_name(model_kind kind)
{
	static const char *const names[] = {"parameter", "state", "noise", "function",
					    "derived process", "function argument", "time", "measure"};
	return names[kind];
}

size_t model_add_noise(model *m, const expr *sym)
{
	size_t n = m->nnoises + 1;
	const expr **corr = xcalloc(n * n, sizeof *corr);
	for (size_t i = 0; i < m->nnoises; i++)
		for (size_t j = 0; j < m->nnoises; j++)
			corr[i * n + j] = m->corr[i * m->nnoises + j];
	free(m->corr);
	m->corr = corr;
	m->noises = xreallocarray(m->noises, n, sizeof *m->noises);
	m->noises[m->nnoises] = sym;
	m->nnoises = n;
	for (size_t i = 0; i < m->nsdes; i++) {
		model_sde *sde = &m->sdes[i];
		sde->diffusion = xreallocarray(sde->diffusion, n, sizeof *sde->diffusion);
		for (size_t k = sde->ndiffusion; k < n; k++)
			sde->diffusion[k] = expr_int(m->ctx, 0);
		sde->ndiffusion = n;
	}
	for (size_t i = 0; i < m->nmeasures; i++) {
		model_measure *q = &m->measures[i];
		q->names = xreallocarray(q->names, n, sizeof *q->names);
		q->shift = xreallocarray(q->shift, n, sizeof *q->shift);
		q->names[n - 1] = sym;
		q->shift[n - 1] = expr_int(m->ctx, 0);
		q->nnoises = n;
	}
	return n - 1;
}

long model_noise_index(const model *m, const expr *sym)
{
	for (size_t i = 0; i < m->nnoises; i++)
		if (m->noises[i] == sym)
			return (long)i;
	return -1;
}

const expr *model_corr(const model *m, size_t i, size_t j)
{
	if (i == j)
		return expr_int(m->ctx, 1);
	const expr *value = m->corr[i * m->nnoises + j];
	return value ? value : expr_int(m->ctx, 0);
}

void model_set_corr(model *m, size_t i, size_t j, const expr *value)
{
	m->corr[i * m->nnoises + j] = value;
	m->corr[j * m->nnoises + i] = value;
}

model_sde *model_sde_of(model *m, const expr *state)
{
	for (size_t i = 0; i < m->nsdes; i++)
		if (m->sdes[i].state == state)
			return &m->sdes[i];
	return NULL;
}

model_sde *model_add_sde(model *m, const expr *state)
{
	model_sde *sde = model_sde_of(m, state);
	if (!sde) {
		m->sdes = xreallocarray(m->sdes, m->nsdes + 1, sizeof *m->sdes);
		sde = &m->sdes[m->nsdes++];
		memset(sde, 0, sizeof *sde);
		sde->state = state;
	}
	free(sde->diffusion);
	sde->diffusion = xcalloc(m->nnoises ? m->nnoises : 1, sizeof *sde->diffusion);
	for (size_t k = 0; k < m->nnoises; k++)
		sde->diffusion[k] = expr_int(m->ctx, 0);
	sde->ndiffusion = m->nnoises;
	sde->drift = expr_int(m->ctx, 0);
	sde->stratonovich = false;
	return sde;
}

void model_remove_sde(model *m, const expr *state)
{
	for (size_t i = 0; i < m->nsdes; i++)
		if (m->sdes[i].state == state) {
			free(m->sdes[i].diffusion);
			memmove(&m->sdes[i], &m->sdes[i + 1], (m->nsdes - i - 1) * sizeof *m->sdes);
			m->nsdes--;
			return;
		}
}

model_measure *model_measure_find(model *m, const char *name)
{
	for (size_t i = 0; i < m->nmeasures; i++)
		if (strcmp(m->measures[i].name, name) == 0)
			return &m->measures[i];
	return NULL;
}

model_measure *model_add_measure(model *m, const char *name)
{
	model_measure *q = model_measure_find(m, name);
	if (!q) {
		m->measures = xreallocarray(m->measures, m->nmeasures + 1, sizeof *m->measures);
		q = &m->measures[m->nmeasures++];
		memset(q, 0, sizeof *q);
		q->name = xstrdup(name);
	} else {
		free(q->names);
		free(q->shift);
	}
	q->nnoises = m->nnoises;
	q->names = xcalloc(m->nnoises ? m->nnoises : 1, sizeof *q->names);
	q->shift = xcalloc(m->nnoises ? m->nnoises : 1, sizeof *q->shift);
	for (size_t k = 0; k < m->nnoises; k++) {
		q->names[k] = m->noises[k];
		q->shift[k] = expr_int(m->ctx, 0);
	}
	return q;
}

bool model_add_relation(model *m, const expr *lhs, const expr *rhs, const expr *difference, model_rel op)
{
	for (size_t i = 0; i < m->nrelations; i++) {
		const model_relation *r = &m->relations[i];
		if (r->lhs == lhs && r->rhs == rhs && r->op == op)
			return false; /* the same relation again (load after save) */
	}
	m->relations = xreallocarray(m->relations, m->nrelations + 1, sizeof *m->relations);
	m->relations[m->nrelations++] =
	        (model_relation){.lhs = lhs, .rhs = rhs, .difference = difference, .op = op};
	return true;
}

void model_drop_relations(model *m, size_t keep)
{
	if (keep < m->nrelations)
		m->nrelations = keep;
}

/* The signs (EXPR_SIGN_* flags) a difference may have under op. */
static int allowed_signs(model_rel op)
{
	switch (op) {
	case MODEL_REL_GT:
		return EXPR_SIGN_POS;
	case MODEL_REL_GE:
		return EXPR_SIGN_NONNEG;
	case MODEL_REL_LT:
		return EXPR_SIGN_NEG;
	case MODEL_REL_LE:
		return EXPR_SIGN_NONPOS;
	}
	return EXPR_SIGN_UNKNOWN;
}

bool model_rel_certain(model_rel op, int sign)
{
	return sign != 0 && (sign & ~allowed_signs(op)) == 0;
}

bool model_rel_impossible(model_rel op, int sign)
{
	return sign != 0 && (sign & allowed_signs(op)) == 0;
}

const char *model_rel_text(model_rel op)
{
	static const char *const texts[] = {">", ">=", "<", "<="};
	return texts[op];
}

void model_remove_measure(model *m, const char *name)
{
	model_measure *q = model_measure_find(m, name);
	if (!q)
		return;
	free(q->name);
	free(q->names);
	free(q->shift);
	size_t i = (size_t)(q - m->measures);
	memmove(q, q + 1, (m->nmeasures - i - 1) * sizeof *q);
	m->nmeasures--;
}

/* Remove item k of an array of n pointers. */
static void remove_item(const expr **items, size_t n, size_t k)
{
	memmove(&items[k], &items[k + 1], (n - k - 1) * sizeof *items);
}

void model_remove_noise(model *m, size_t k)
{
	size_t n = m->nnoises;
	for (size_t i = 0, to = 0; i < n; i++)
		for (size_t j = 0; j < n; j++)
			if (i != k && j != k)
				m->corr[to++] = m->corr[i * n + j];
	remove_item(m->noises, n, k);
	for (size_t i = 0; i < m->nsdes; i++) {
		remove_item(m->sdes[i].diffusion, m->sdes[i].ndiffusion, k);
		m->sdes[i].ndiffusion--;
	}
	for (size_t i = 0; i < m->nmeasures; i++) {
		remove_item(m->measures[i].names, n, k);
		remove_item(m->measures[i].shift, n, k);
		m->measures[i].nnoises--;
	}
	m->nnoises--;
}

/* ------------------------------------------------------------------ snapshots */

/* A copy of n items of size bytes (at least one byte, so never NULL). */
static void *copy_of(const void *items, size_t n, size_t size)
{
	void *copy = xmalloc(n * size + 1);
	if (n)
		memcpy(copy, items, n * size);
	return copy;
}

/* A deep copy of the tables of src (the expressions are shared: nodes are immutable). */
static void model_copy(model *dst, const model *src)
{
	*dst = *src;
	dst->entries = copy_of(src->entries, src->nentries, sizeof *src->entries);
	dst->capentries = src->nentries;
	for (size_t i = 0; i < src->nentries; i++)
		dst->entries[i].name = xstrdup(src->entries[i].name);
	dst->name_index = copy_of(src->name_index, src->name_index_cap, sizeof *src->name_index);
	dst->noises = copy_of(src->noises, src->nnoises, sizeof *src->noises);
	dst->corr = copy_of(src->corr, src->nnoises * src->nnoises, sizeof *src->corr);
	dst->sdes = copy_of(src->sdes, src->nsdes, sizeof *src->sdes);
	for (size_t i = 0; i < src->nsdes; i++)
		dst->sdes[i].diffusion = copy_of(src->sdes[i].diffusion, src->sdes[i].ndiffusion,
		                                 sizeof *src->sdes[i].diffusion);
	dst->measures = copy_of(src->measures, src->nmeasures, sizeof *src->measures);
	for (size_t i = 0; i < src->nmeasures; i++) {
		model_measure *q = &dst->measures[i];
		q->name = xstrdup(q->name);
		q->names = copy_of(q->names, q->nnoises, sizeof *q->names);
		q->shift = copy_of(q->shift, q->nnoises, sizeof *q->shift);
	}
	dst->relations = copy_of(src->relations, src->nrelations, sizeof *src->relations);
}

void model_snapshot_take(const model *m, model_snapshot *snapshot)
{
	model_copy(&snapshot->copy, m);
	snapshot->mark = expr_sym_mark(m->ctx);
}

void model_snapshot_restore(model *m, model_snapshot *snapshot)
{
	model_free(m);
	*m = snapshot->copy;
	expr_sym_undo(m->ctx, snapshot->mark);
}

void model_snapshot_drop(model *m, model_snapshot *snapshot)
{
	model_free(&snapshot->copy);
	expr_sym_keep(m->ctx, snapshot->mark);
}
