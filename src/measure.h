/* measure.h - changes of measure (Girsanov): the drifts the noises gain.
 *
 * Under a measure Q, noise k is dW_k = dZ_k + shift_k*dt with Z_k a Q Brownian
 * motion.  A declaration gives the shifts of some noises; those of the others
 * follow from the correlations.
 */
#ifndef ITOX_MEASURE_H
#define ITOX_MEASURE_H

#include <stdbool.h>

#include "model.h"

typedef enum measure_error {
	MEASURE_OK,
	MEASURE_SINGULAR, /* the listed noises are perfectly correlated */
} measure_error;

/* Complete a change of measure over the model's noises: where listed[k],
 * shift[k] and names[k] (the Q noise) are given; every other noise gets the
 * shift implied by the correlations and keeps its name.  Engine errors
 * (limits) are left in the model's context for the caller to report. */
measure_error measure_complete(const model *m, const bool *listed, const expr **shift, const expr **names);

#endif
