/* sim.h - random numbers for sampling and simulation.
 *
 * xoshiro256++ (Blackman and Vigna, "Scrambled linear pseudorandom number
 * generators", ACM TOMS 2021), seeded through splitmix64, with the jump
 * function for independent streams; normals by the ziggurat method with 256
 * layers (Marsaglia and Tsang, "The Ziggurat Method for Generating Random
 * Variables", Journal of Statistical Software 5(8), 2000), taking the layer
 * and the sign from bits of the 64-bit draw that the uniform does not use
 * (the correlation Doornik pointed out in "An Improved Ziggurat Method to
 * Generate Normal Random Samples", 2005, comes from sharing them).
 */
#ifndef ITOX_SIM_H
#define ITOX_SIM_H

#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>

typedef struct sim_rng {
	uint64_t s[4];
} sim_rng;

void sim_rng_seed(sim_rng *rng, uint64_t seed);
void sim_rng_jump(sim_rng *rng); /* advance 2^128 steps: a new independent stream */
uint64_t sim_rng_next(sim_rng *rng);
double sim_uniform(sim_rng *rng);	/* in [0, 1) */

/* Normals come from SIM_LANES streams side by side, so the generator runs
 * in vector lanes: sim_lanes_take fills lane k with the stream, then jumps
 * the stream (so a caller taking lanes for block after block gives lane k
 * of block j the seed's stream jumped j SIM_LANES + k times).
 * sim_lanes_normals gives n standard normals, in batches of
 * SIM_NORMAL_BATCH from the start of the call: position i of a batch comes
 * from lane i mod SIM_LANES; the few draws a batch rejects are redrawn
 * after it from lane 0.  So the numbers depend on how a sequence is split
 * into calls, except that calls whose lengths are multiples of the batch
 * give the numbers of one call. */
enum { SIM_LANES = 8, SIM_NORMAL_BATCH = 256 };
typedef struct sim_lanes {
	uint64_t s[4][SIM_LANES]; /* word w of lane k: s[w][k] */
} sim_lanes;
void sim_lanes_take(sim_lanes *lanes, sim_rng *stream);
void sim_lanes_normals(sim_lanes *lanes, size_t n, double *out);

/* The ziggurat's layers (for tests): x[0] is the width of the bottom layer's
 * rectangle (area v, the tail included), x[1] = r, x[256] = 0; every layer
 * i >= 1 is the rectangle [0, x[i]] x [f(x[i]), f(x[i+1])] of area v, with
 * f(x) = exp(-x^2/2). */
enum { SIM_ZIG_LAYERS = 256 };
const double *sim_ziggurat_x(double *r, double *v);

/* Lower Cholesky factor l of the n x n correlation matrix c (row-major), with
 * c = l l^T; a zero pivot (a degenerate matrix, rho = +-1) leaves its column
 * zero.  Returns false when c is not symmetric positive semi-definite. */
bool sim_cholesky(size_t n, const double *c, double *l);

/* Running mean and variance (Welford), mergeable in a fixed order (Chan,
 * Golub, LeVeque), so block sums combine the same whatever the threads; with
 * the SIM_STAT_EXTREMES smallest and largest values added, so that the values
 * farthest from the mean can be set aside at the end. */
enum { SIM_STAT_EXTREMES = 8 };
typedef struct sim_stat {
	double n, mean, m2;
	double lo[SIM_STAT_EXTREMES]; /* the smallest values, ascending: lo[0] the smallest */
	double hi[SIM_STAT_EXTREMES]; /* the largest values, descending: hi[0] the largest */
	int nlo, nhi;                 /* how many of lo and hi are kept */
} sim_stat;
void sim_stat_add(sim_stat *s, double x); /* x finite (callers leave out NaN and Inf paths) */
void sim_stat_merge(sim_stat *into, const sim_stat *other);
double sim_stat_sd(const sim_stat *s); /* sample standard deviation */
double sim_stat_se(const sim_stat *s); /* standard error of the mean: sd/sqrt(n) */
/* The largest share of the sum of squared deviations that one value holds:
 * about 2 log(n)/n for normal samples, near 1 when one value dominates (then
 * the standard error says little). */
double sim_stat_top_share(const sim_stat *s);
/* The statistics without the value farthest from the mean (lo[0] or hi[0]);
 * unchanged when that value holds all but 1e-8 of the sum of squared
 * deviations (the rest cannot be recovered from the sums in double). */
sim_stat sim_stat_without_extreme(const sim_stat *s);
/* The statistics without their farthest values, set aside one at a time (the
 * one farthest from the mean of those left) while one value holds more than
 * `share` of the sum of squared deviations; at most SIM_STAT_EXTREMES - 1 of
 * them, and none when n < 4 SIM_STAT_EXTREMES or when the rest cannot be
 * recovered (see sim_stat_without_extreme).  *removed says how many; the
 * result's top share is over `share` when one of those limits stopped it. */
sim_stat sim_stat_tame(const sim_stat *s, double share, int *removed);

#endif
