/* ratform-internal.h - the state of one normal-form computation, shared by
 * ratform.c (atoms, the result) and ratform-frac.c (fraction arithmetic). */
#ifndef ITOX_RATFORM_INTERNAL_H
#define ITOX_RATFORM_INTERNAL_H

#include <flint/fmpq_mpoly.h>

#include "expr-internal.h"

/* A map from pairs of pointers to positive numbers (0: absent). */
typedef struct ratform_pair_slot {
	const void *a, *b;
	size_t value;
} ratform_pair_slot;

typedef struct ratform_pair_map {
	ratform_pair_slot *slots;
	size_t count, capacity;
} ratform_pair_map;

size_t ratform_pair_get(const ratform_pair_map *map, const void *a, const void *b);
void ratform_pair_put(ratform_pair_map *map, const void *a, const void *b, size_t value);

/* The atoms x^(c m) of one base x (NULL: exp) and monomial m.  coefs holds
 * the distinct c seen; unit is u (atom w = x^(u m)).  A split group has one
 * atom per distinct |c| (their ratios are too large for one atom). */
typedef struct ratform_group {
	const expr *base, *monomial;
	mpq_t *coefs;
	size_t ncoefs;
	mpq_t unit;
	bool split;
	slong var;         /* the first variable of the ratform_group */
	bool candidate;    /* has a relation (base a number, sum, product or abs) */
	bool has_relation; /* w^degree = relation/relation_den (initialised) */
	unsigned long degree;
	fmpq_mpoly_t relation, relation_den;
} ratform_group;

/* A variable of the polynomial ring: x^(unit * m) of its group. */
typedef struct ratform_var {
	size_t group;
	mpq_t unit;
} ratform_var;

/* num/den with den monic after each step. */
typedef struct ratform_frac {
	fmpq_mpoly_t num, den;
} ratform_frac;

/* One part of a power: group (base, monomial)^power, or, when monomial is
 * NULL, the polynomial fraction of base to the integer power. */
typedef struct ratform_piece {
	const expr *base, *monomial;
	mpq_t power;
} ratform_piece;

typedef struct ratform_job {
	expr_ctx *ctx;
	size_t max_terms;
	expr_map prepared;         /* node -> node with normalised arguments */
	expr_map visited;          /* nodes whose atoms were collected */
	ratform_pair_map group_of; /* (base, monomial) -> 1 + group index */
	ratform_group *groups;
	size_t ngroups, group_cap;
	ratform_var *vars;
	slong nvars;
	size_t *relations; /* groups with a relation, by increasing height of the base */
	size_t nrelations;
	bool ring_ready;
	fmpq_mpoly_ctx_t ring;
	ratform_pair_map frac_of; /* node -> 1 + index in fracs */
	ratform_frac **fracs;
	size_t nfracs, frac_cap;
	ratform_piece *pieces; /* a stack: callers pop back to their mark */
	size_t npieces, piece_cap;
} ratform_job;

/* Push the pieces of factor i of the product e (or of the atom e) on the stack. */
void ratform_factor_pieces(ratform_job *j, const expr *e, size_t i);
/* The variable and exponent of the atom piece p (-1 on error). */
slong ratform_piece_var(ratform_job *j, const ratform_piece *p, slong *exponent);
/* The fraction of a node in the ring (memoized); NULL on error. */
const ratform_frac *ratform_fraction(ratform_job *j, const expr *e);
/* Set up the relations of the candidate groups; false on error. */
bool ratform_set_relations(ratform_job *j);
/* Clear square roots out of f's denominator; false when it cannot (or on error). */
bool ratform_rationalise(ratform_job *j, ratform_frac *f);

#endif
