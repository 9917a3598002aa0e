/* domain.h - points inside the domain a model declares, for claims.
 *
 * A point gives each atom an exact rational value: parameters and states
 * inside their declared signs and ranges (a bound may be an expression of
 * other names: a > b, a > exp(2), a > 1e300), t >= 0, and generic partials
 * (f_x(t, x), independent atoms) any real value.  Magnitudes spread over many
 * scales and some points lie near a bound; a degenerate range [c, c] gives c.
 * Names that bounds use are sampled too (first), so a > b is honoured even
 * when a claim mentions only a.  The model's relations between expressions
 * (2*kappa*theta > xi^2) that use an atom hold at every point, certified in
 * ball arithmetic; their names are sampled too.
 */
#ifndef ITOX_DOMAIN_H
#define ITOX_DOMAIN_H

#include <gmp.h>
#include <stdbool.h>
#include <stdint.h>

#include "model.h"

typedef struct domain domain;

/* The domain of the given atoms (symbols or generic partial applications). */
domain *domain_new(expr_ctx *ctx, model *m, size_t n, const expr *const *atoms, uint64_t seed);
void domain_free(domain *d);

/* The atoms a point gives values to: the requested ones first, then the
 * names their bounds and relations use. */
size_t domain_size(const domain *d);
const expr *domain_atom(const domain *d, size_t i);

/* Draw a point into values[domain_size]; false when none satisfying every
 * declared bound and relation was found (an empty or too thin domain). */
bool domain_draw(domain *d, mpq_t *values);

/* Does the domain have an interior (no atom pinned to one value)?  A nonzero
 * rational function cannot vanish on a set with interior. */
bool domain_has_interior(const domain *d);

#endif
