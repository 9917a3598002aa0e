/* ito.h - differentials a*dt + sum_k b_k*dW_k and Itô's formula.
 *
 * The multiplication table dt*dt = 0, dt*dW = 0, dW_k*dW_l = rho_kl*dt is the
 * only place where increments meet (ito_mul); a new kind of increment is a new
 * row of that table.  Every function takes a measure (NULL for the model's own):
 * under Q, dW_k = dZ_k + shift_k*dt, and results are in the Q noises.
 */
#ifndef ITOX_ITO_H
#define ITOX_ITO_H

#include "model.h"

typedef struct ito_diff {
	const expr *dt;	  /* the dt coefficient */
	const expr **dw;  /* one coefficient per noise (model order) */
	size_t n;
} ito_diff;

void ito_diff_zero(ito_diff *d, const model *m);
void ito_diff_free(ito_diff *d);
bool ito_diff_failed(const ito_diff *d); /* some coefficient is NULL (an error) */
void ito_diff_add(const model *m, const ito_diff *a, const ito_diff *b, ito_diff *out);
void ito_diff_scale(const model *m, const ito_diff *a, const expr *factor, ito_diff *out);

/* The dynamics of a symbol: a state's Itô SDE, a noise's dW, t's dt.
 * Returns false when the symbol has none (a parameter). */
bool ito_dynamics(model *m, const model_measure *q, const expr *sym, ito_diff *out);

/* Itô's formula: the differential of f. */
void ito_d(model *m, const model_measure *q, const expr *f, ito_diff *out);
/* Does ito_d refuse f (a function not twice differentiable, or not defined,
 * where the processes can go)?  With set_error, the reason becomes the
 * context's error, as in ito_d. */
bool ito_refuses(model *m, const expr *f, bool set_error);

/* The product of two differentials by the table; only out->dt is nonzero. */
void ito_mul(model *m, const ito_diff *a, const ito_diff *b, ito_diff *out);

/* Covariation rate sum_kl a_k b_l rho_kl. */
const expr *ito_covariation(model *m, const ito_diff *a, const ito_diff *b);

/* Itô drift of a state declared in either convention, and its Stratonovich drift. */
const expr *ito_state_ito_drift(model *m, const model_sde *sde);
const expr *ito_state_stratonovich_drift(model *m, const model_sde *sde);

/* The left side of the backward equation V_t + L V - discount*V = 0, for a
 * generic function application V (discount may be NULL). */
const expr *ito_pde(model *m, const model_measure *q, const expr *V, const expr *discount);

/* Does an equation in the variables args (t, states) close?  The first
 * process (a state or a noise) that is not among args but appears in the
 * SDE of a listed state under q (*driven: that state) or in the discount
 * (*driven: NULL); NULL when the equation closes. */
const expr *ito_unclosed(model *m, const model_measure *q, size_t nargs, const expr *const *args,
                         const expr *discount, const expr **driven);

#endif
