/* forward.h - the Kolmogorov forward (Fokker-Planck) equation and the
 * moment equations of a state, under a measure (NULL: the model's own).
 */
#ifndef ITOX_FORWARD_H
#define ITOX_FORWARD_H

#include "ito.h"

/* The right side of p_t = -sum_i d_i(mu_i p) + 1/2 sum_ij d_i d_j(C_ij p)
 * for a generic function application p whose arguments are t and states
 * (the arguments without dynamics are constants); NULL on an engine error. */
const expr *forward_rhs(model *m, const model_measure *q, const expr *p);

typedef enum moments_status {
	MOMENTS_OK,
	MOMENTS_NOT_POLYNOMIAL, /* culprit: a term of the drift or C that is not polynomial in X */
	MOMENTS_DRIFT_DEGREE,   /* the drift has degree > 1 in X; culprit: the drift */
	MOMENTS_SQUARE_DEGREE,  /* C = diffusion^2 has degree > 2 in X; culprit: C */
	MOMENTS_OTHER_PROCESS,  /* a coefficient moves with another process; culprit: it */
	MOMENTS_ENGINE,         /* an engine error (in the context) */
} moments_status;

typedef struct moments {
	size_t order;            /* K */
	const expr **symbols;    /* m1..mK */
	const expr **equations;  /* m_k' = equations[k-1], linear in the symbols */
	const expr **solutions;  /* m_k(t) given X_0 = X, or NULL (see no_solution) */
	const expr *no_solution; /* why there is none: time (the coefficients depend on t) or an
	                          * expression that must be nonzero and is not known to be */
	const expr *culprit;     /* after a refusal */
} moments;

/* The moment equations of the state X up to order K; the status says why
 * the system does not close. */
moments_status moments_compute(model *m, const model_measure *q, const expr *X, size_t K, moments *out);
void moments_free(moments *mo);

#endif
