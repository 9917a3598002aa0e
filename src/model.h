/* model.h - names and their kinds, assumptions, correlations, SDEs, measures.
 *
 * A model owns no expressions (they belong to its expr_ctx); it owns its tables.
 */
#ifndef ITOX_MODEL_H
#define ITOX_MODEL_H

#include <stdbool.h>
#include <stddef.h>

#include "expr.h"

typedef enum model_kind {
	MODEL_PARAM, /* a real constant */
	MODEL_STATE, /* a state with an SDE */
	MODEL_NOISE, /* a standard Brownian motion */
	MODEL_FUNC,  /* an unknown smooth function */
	MODEL_LET,   /* a named derived expression */
	MODEL_ARG,   /* an argument name of a func that is declared nothing else */
	MODEL_TIME,  /* t */
	MODEL_MEASURE,
} model_kind;

typedef struct model_entry {
	char *name;
	model_kind kind;
	const expr *sym;     /* the symbol (also for a func) */
	const expr *value;   /* MODEL_LET: the definition */
	const expr *lo, *hi; /* declared range, or NULL */
	bool lo_strict, hi_strict;
	bool pending_state; /* named by assume before its SDE: not usable yet */
	bool implicit;      /* MODEL_FUNC declared by pde V(...), not by func: a later pde
	                     * may declare it again with other arguments while nothing uses it */
} model_entry;

/* The SDE of a state: Itô coefficients, or Stratonovich ones as declared. */
typedef struct model_sde {
	const expr *state;
	const expr *drift;      /* as declared (Stratonovich drift if stratonovich) */
	const expr **diffusion; /* one per noise, indexed like model->noises */
	size_t ndiffusion;
	bool stratonovich;
} model_sde;

/* A relation between two expressions that the model's points must keep
 * (assume 2*kappa*theta > xi^2): difference = lhs - rhs compared with 0.
 * It restricts the points claims are tested at; it does not give signs to
 * symbols (a range on one name does: model_entry lo, hi). */
typedef enum model_rel { MODEL_REL_GT, MODEL_REL_GE, MODEL_REL_LT, MODEL_REL_LE } model_rel;

typedef struct model_relation {
	const expr *lhs, *rhs;  /* as declared, for show and save */
	const expr *difference; /* lhs - rhs */
	model_rel op;           /* difference > 0, >= 0, < 0 or <= 0 */
} model_relation;

/* A change of measure: under it, noise k is a Brownian motion named names[k],
 * and dW_k(P) = dW_k(Q) + shift[k]*dt. */
typedef struct model_measure {
	char *name;
	size_t nnoises;
	const expr **names;
	const expr **shift;
} model_measure;

typedef struct model {
	expr_ctx *ctx;
	const expr *time;
	model_entry *entries;
	size_t nentries, capentries;
	size_t *name_index; /* open addressing over entries by name: entry index + 1, 0 empty */
	size_t name_index_cap;
	const expr **noises; /* in declaration order */
	size_t nnoises;
	const expr **corr; /* nnoises x nnoises, row-major; NULL entries mean 0 */
	model_sde *sdes;   /* in declaration order */
	size_t nsdes;
	model_measure *measures;
	size_t nmeasures;
	model_relation *relations; /* in declaration order */
	size_t nrelations;
} model;

void model_init(model *m, expr_ctx *ctx);
void model_free(model *m);

model_entry *model_lookup(model *m, const char *name);
/* Remove an entry (the last declaration of a statement that failed). */
void model_forget(model *m, model_entry *entry);
model_entry *model_add(model *m, const char *name, model_kind kind, const expr *sym);
const char *model_kind_name(model_kind kind);

size_t model_add_noise(model *m, const expr *sym);          /* returns its index */
long model_noise_index(const model *m, const expr *sym);    /* -1 when not a noise */
const expr *model_corr(const model *m, size_t i, size_t j); /* 1 on the diagonal */
void model_set_corr(model *m, size_t i, size_t j, const expr *value);

model_sde *model_sde_of(model *m, const expr *state); /* NULL when not a state */
model_sde *model_add_sde(model *m, const expr *state);
void model_remove_sde(model *m, const expr *state);

/* Add the relation lhs op rhs (difference: lhs - rhs); false when the
 * model has it already.  model_drop_relations(m, n) keeps the first n. */
bool model_add_relation(model *m, const expr *lhs, const expr *rhs, const expr *difference, model_rel op);
void model_drop_relations(model *m, size_t keep);
/* Is a value of sign flags (EXPR_SIGN_*) certain to keep op, or certain to break it? */
bool model_rel_certain(model_rel op, int sign);
bool model_rel_impossible(model_rel op, int sign);
/* ">", ">=", "<", "<=" */
const char *model_rel_text(model_rel op);

model_measure *model_measure_find(model *m, const char *name);
model_measure *model_add_measure(model *m, const char *name);
void model_remove_measure(model *m, const char *name);
/* Remove noise index k from every table (its column of the correlations,
 * of the SDEs' diffusions and of the measures). */
void model_remove_noise(model *m, size_t k);

/* A model as it was, with its symbols' attributes (signs, ranks, function
 * arguments): a statement that fails puts it back, so it leaves the model
 * exactly as it found it.  Snapshots nest (a load and its statements); end
 * each with one restore or drop, the innermost first. */
typedef struct model_snapshot {
	model copy;
	size_t mark; /* of the symbols' journal (expr_sym_mark) */
} model_snapshot;
void model_snapshot_take(const model *m, model_snapshot *snapshot);
void model_snapshot_restore(model *m, model_snapshot *snapshot);
void model_snapshot_drop(model *m, model_snapshot *snapshot);

#endif
