/* sim.h - random numbers for sampling and simulation.
 *
 * xoshiro256++ (Blackman and Vigna, "Scrambled linear pseudorandom number
 * generators", ACM TOMS 2021), seeded through splitmix64, with the jump
 * function for independent streams; normals by the polar method (Marsaglia
 * and Bray, SIAM Review 1964).
 */
#ifndef ITOX_SIM_H
#define ITOX_SIM_H

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

#endif
