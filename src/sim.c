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

/* c = l l^T column by column: l_jj = sqrt(c_jj - sum_k<j l_jk^2),
 * l_ij = (c_ij - sum_k<j l_ik l_jk) / l_jj. */
bool sim_cholesky(size_t n, const double *c, double *l)
{
	const double slack = 1e-12;
	for (size_t i = 0; i < n * n; i++)
		l[i] = 0;
	for (size_t i = 0; i < n; i++)
		for (size_t j = 0; j < i; j++)
			if (!(fabs(c[i * n + j] - c[j * n + i]) <= slack))
				return false;
	for (size_t j = 0; j < n; j++) {
		double pivot = c[j * n + j];
		for (size_t k = 0; k < j; k++)
			pivot -= l[j * n + k] * l[j * n + k];
		if (!(pivot >= -slack))
			return false;
		if (pivot <= slack) {
			/* degenerate: the rest of the column must vanish */
			for (size_t i = j + 1; i < n; i++) {
				double rest = c[i * n + j];
				for (size_t k = 0; k < j; k++)
					rest -= l[i * n + k] * l[j * n + k];
				if (!(fabs(rest) <= 1e-9))
					return false;
			}
			continue;
		}
		double root = sqrt(pivot);
		l[j * n + j] = root;
		for (size_t i = j + 1; i < n; i++) {
			double rest = c[i * n + j];
			for (size_t k = 0; k < j; k++)
				rest -= l[i * n + k] * l[j * n + k];
			l[i * n + j] = rest / root;
		}
	}
	return true;
}

void sim_stat_add(sim_stat *s, double x)
{
	s->n += 1;
	double delta = x - s->mean;
	s->mean += delta / s->n;
	s->m2 += delta * (x - s->mean);
}

/* Chan, Golub and LeVeque: M2 = M2a + M2b + delta^2 na nb / n. */
void sim_stat_merge(sim_stat *into, const sim_stat *other)
{
	if (other->n == 0)
		return;
	if (into->n == 0) {
		*into = *other;
		return;
	}
	double n = into->n + other->n;
	double delta = other->mean - into->mean;
	into->mean += delta * other->n / n;
	into->m2 += other->m2 + delta * delta * into->n * other->n / n;
	into->n = n;
}

double sim_stat_sd(const sim_stat *s)
{
	return s->n > 1 ? sqrt(s->m2 / (s->n - 1)) : 0;
}

double sim_stat_se(const sim_stat *s)
{
	return s->n > 1 ? sim_stat_sd(s) / sqrt(s->n) : 0;
}
