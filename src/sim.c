/* sim.c - xoshiro256++ and polar normals (references in sim.h). */
#include "sim.h"

#include <math.h>

static uint64_t rotl(uint64_t x, int k)
{
	return (x << k) | (x >> (64 - k));
}

static uint64_t splitmix64(uint64_t *state)
{
	uint64_t z = (*state += 0x9e3779b97f4a7c15ULL);
	z = (z ^ (z >> 30)) * 0xbf58476d1ce4e5b9ULL;
	z = (z ^ (z >> 27)) * 0x94d049bb133111ebULL;
	return z ^ (z >> 31);
}

void sim_rng_seed(sim_rng *rng, uint64_t seed)
{
	uint64_t state = seed;
	for (int i = 0; i < 4; i++)
		rng->s[i] = splitmix64(&state);
	rng->has_spare = 0;
}

uint64_t sim_rng_next(sim_rng *rng)
{
	uint64_t *s = rng->s;
	uint64_t result = rotl(s[0] + s[3], 23) + s[0];
	uint64_t t = s[1] << 17;
	s[2] ^= s[0];
	s[3] ^= s[1];
	s[1] ^= s[2];
	s[0] ^= s[3];
	s[2] ^= t;
	s[3] = rotl(s[3], 45);
	return result;
}

void sim_rng_jump(sim_rng *rng)
{
	static const uint64_t jump[] = {0x180ec6d33cfd0abaULL, 0xd5a61266f0c9392cULL,
					0xa9582618e03fc9aaULL, 0x39abdc4529b1661cULL};
	uint64_t s0 = 0, s1 = 0, s2 = 0, s3 = 0;
	for (int i = 0; i < 4; i++)
		for (int b = 0; b < 64; b++) {
			if (jump[i] & (UINT64_C(1) << b)) {
				s0 ^= rng->s[0];
				s1 ^= rng->s[1];
				s2 ^= rng->s[2];
				s3 ^= rng->s[3];
			}
			sim_rng_next(rng);
		}
	rng->s[0] = s0;
	rng->s[1] = s1;
	rng->s[2] = s2;
	rng->s[3] = s3;
	rng->has_spare = 0;
}

double sim_uniform(sim_rng *rng)
{
	return (double)(sim_rng_next(rng) >> 11) * 0x1.0p-53;
}

double sim_normal(sim_rng *rng)
{
	if (rng->has_spare) {
		rng->has_spare = 0;
		return rng->spare;
	}
	double u, v, s;
	do {
		u = 2.0 * sim_uniform(rng) - 1.0;
		v = 2.0 * sim_uniform(rng) - 1.0;
		s = u * u + v * v;
	} while (s >= 1.0 || s == 0.0);
	double factor = sqrt(-2.0 * log(s) / s);
	rng->spare = v * factor;
	rng->has_spare = 1;
	return u * factor;
}
