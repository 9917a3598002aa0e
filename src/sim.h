/* sim.h - random numbers for sampling and simulation.
 *
 * xoshiro256++ (Blackman and Vigna, "Scrambled linear pseudorandom number
 * generators", ACM TOMS 2021), seeded through splitmix64, with the jump
 * function for independent streams; normals by the polar method (Marsaglia
 * and Bray, SIAM Review 1964).
 */
#ifndef ITOX_SIM_H
#define ITOX_SIM_H

#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>

typedef struct sim_rng {
	uint64_t s[4];
	double spare;	/* the second normal of a polar pair */
	int has_spare;
} sim_rng;

void sim_rng_seed(sim_rng *rng, uint64_t seed);
void sim_rng_jump(sim_rng *rng); /* advance 2^128 steps: a new independent stream */
uint64_t sim_rng_next(sim_rng *rng);
double sim_uniform(sim_rng *rng);	/* in [0, 1) */
double sim_normal(sim_rng *rng);	/* standard normal */

/* Lower Cholesky factor l of the n x n correlation matrix c (row-major), with
 * c = l l^T; a zero pivot (a degenerate matrix, rho = +-1) leaves its column
 * zero.  Returns false when c is not symmetric positive semi-definite. */
bool sim_cholesky(size_t n, const double *c, double *l);

/* Running mean and variance (Welford), mergeable in a fixed order (Chan,
 * Golub, LeVeque), so block sums combine the same whatever the threads. */
typedef struct sim_stat {
	double n, mean, m2;
} sim_stat;
void sim_stat_add(sim_stat *s, double x);
void sim_stat_merge(sim_stat *into, const sim_stat *other);
double sim_stat_sd(const sim_stat *s); /* sample standard deviation */
double sim_stat_se(const sim_stat *s); /* standard error of the mean: sd/sqrt(n) */

#endif
