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
 * ball arithmetic; their names are sampled too.  Half of the points lie at
 * or near marks: numbers of the claim and the atoms' bounds (domain_add_mark).
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

/* A mark: a value worth trying (a number of the claim).  Every second point
 * puts one atom at or near a mark (q, q (1 +- 10^-k), q +- 10^-k, for k from 1
 * to 30), or near a bound of that atom, within the domain; q and -q are marks
 * (at most 48 in all).  A false claim such as abs(y - 10^9) = 10^9 - y is seen
 * from both sides of 10^9 whatever the seed. */
void domain_add_mark(domain *d, mpq_srcptr q);

/* A mark of the atom name alone that depends on the other atoms: the
 * expression at (free of name), evaluated where they were drawn (the root of
 * an argument A*name + B of abs, log or a root: at = -B/A). */
void domain_add_root(domain *d, const expr *name, const expr *at);

/* Draw a point into values[domain_size] (exact rationals: the shortest
 * decimal of a drawn double, or a mark's exact neighbour); false when none
 * satisfying every declared bound and relation was found (an empty or too
 * thin domain).  Bounds, signs and relations are certified at the exact point. */
bool domain_draw(domain *d, mpq_t *values);

/* Does the domain have an interior (no atom pinned to one value)?  A nonzero
 * rational function cannot vanish on a set with interior. */
bool domain_has_interior(const domain *d);

#endif
