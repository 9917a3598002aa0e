/* sim.c - xoshiro256++ and ziggurat normals (references in sim.h). */
#include <config.h>

#include "sim.h"

#include <math.h>
#include <pthread.h>
#include <string.h>

#include "vector.h"

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
}

double sim_uniform(sim_rng *rng)
{
	return (double)(sim_rng_next(rng) >> 11) * 0x1.0p-53;
}

/* The layers, computed once: r is the start of the tail for 256 layers
 * (Marsaglia and Tsang, section 2 and their table; the unit tests check that
 * the layers close, x[255] (1 - f(x[255])) = v), v = r f(r) + the tail's area
 * sqrt(pi/2) erfc(r/sqrt 2), and x[i+1] = f^-1(f(x[i]) + v/x[i]). */
static const double zig_r = 3.6541528853610088;
static double zig_v, zig_x[SIM_ZIG_LAYERS + 1], zig_f[SIM_ZIG_LAYERS + 1];
static pthread_once_t zig_once = PTHREAD_ONCE_INIT;

static double gauss(double x)
{
	return exp(-0.5 * x * x);
}

static void zig_build(void)
{
	const double half_pi_root = 1.2533141373155002512; /* sqrt(pi/2) */
	zig_v = zig_r * gauss(zig_r) + half_pi_root * erfc(zig_r / sqrt(2.0));
	zig_x[0] = zig_v / gauss(zig_r);
	zig_x[1] = zig_r;
	for (int i = 1; i < SIM_ZIG_LAYERS - 1; i++)
		zig_x[i + 1] = sqrt(-2.0 * log(zig_v / zig_x[i] + gauss(zig_x[i])));
	zig_x[SIM_ZIG_LAYERS] = 0;
	for (int i = 0; i <= SIM_ZIG_LAYERS; i++)
		zig_f[i] = gauss(zig_x[i]);
}

const double *sim_ziggurat_x(double *r, double *v)
{
	pthread_once(&zig_once, zig_build);
	*r = zig_r;
	*v = zig_v;
	return zig_x;
}

/* Beyond r: Marsaglia's tail method, a = -log(u1)/r, b = -log(u2) until
 * 2b > a^2, then r + a (u in (0, 1], so the logs are finite). */
static double zig_tail(sim_rng *rng)
{
	double a, b;
	do {
		a = -log(1.0 - sim_uniform(rng)) / zig_r;
		b = -log(1.0 - sim_uniform(rng));
	} while (b + b <= a * a);
	return zig_r + a;
}

/* The rare part of a draw, x = u x[layer] at or beyond x[layer + 1]: the
 * tail (layer 0) or the wedge test; NAN means draw again. */
static double zig_edge(sim_rng *rng, unsigned layer, double x)
{
	if (layer == 0)
		return zig_tail(rng);
	double y = zig_f[layer] + sim_uniform(rng) * (zig_f[layer + 1] - zig_f[layer]);
	return y < gauss(x) ? x : NAN;
}

/* The candidate of one 64-bit output: bits 0-7 pick the layer, bits 12-63
 * the uniform u in [0, 1) (through the exponent of 1.0, so the compiler can
 * vectorise it), x = u x[layer]; bit 8 is the sign. */
static inline double zig_candidate(uint64_t bits)
{
	uint64_t ubits = (bits >> 12) | UINT64_C(0x3ff0000000000000);
	double u;
	memcpy(&u, &ubits, sizeof u);
	return (u - 1.0) * zig_x[bits & 0xff];
}

static inline double with_sign(double x, uint64_t bits)
{
	uint64_t xbits;
	memcpy(&xbits, &x, sizeof xbits);
	xbits |= (bits & 0x100) << 55;
	memcpy(&x, &xbits, sizeof x);
	return x;
}

/* A full draw for a position the batch rejected, from the output bits it
 * rejected: the tail or wedge test, then whole new draws until one is
 * accepted. */
static double zig_redraw(sim_rng *rng, uint64_t bits)
{
	for (;;) {
		unsigned layer = (unsigned)(bits & 0xff);
		double x = zig_candidate(bits);
		if (x < zig_x[layer + 1])
			return with_sign(x, bits);
		x = zig_edge(rng, layer, x);
		if (!isnan(x))
			return with_sign(x, bits);
		bits = sim_rng_next(rng);
	}
}

enum { ZIG_CHUNK = 16 };

/* The common case over a batch of m outputs: x is accepted when
 * x < x[layer + 1] (about 99 % of the draws); rejected positions get NAN,
 * and bad[c] says whether chunk c of ZIG_CHUNK positions has any. */
ITOX_VECTOR static void zig_accept(size_t m, const uint64_t *restrict raw, double *restrict out,
				   unsigned char *restrict bad)
{
	for (size_t c = 0; c * ZIG_CHUNK < m; c++) {
		size_t first = c * ZIG_CHUNK, end = m - first < ZIG_CHUNK ? m : first + ZIG_CHUNK;
		uint64_t rejected = 0;
		for (size_t i = first; i < end; i++) {
			double x = zig_candidate(raw[i]), limit = zig_x[(raw[i] & 0xff) + 1];
			out[i] = x < limit ? with_sign(x, raw[i]) : NAN;
			rejected |= x >= limit;
		}
		bad[c] = rejected != 0;
	}
}

void sim_lanes_take(sim_lanes *lanes, sim_rng *stream)
{
	for (int k = 0; k < SIM_LANES; k++) {
		for (int w = 0; w < 4; w++)
			lanes->s[w][k] = stream->s[w];
		sim_rng_jump(stream);
	}
}

/* The generator's outputs for a batch, lane by lane: m must be a multiple of
 * SIM_LANES; raw[i] is the next output of lane i mod SIM_LANES. */
ITOX_VECTOR static void lanes_fill(sim_lanes *restrict lanes, size_t m, uint64_t *restrict raw)
{
	uint64_t s0[SIM_LANES], s1[SIM_LANES], s2[SIM_LANES], s3[SIM_LANES];
	memcpy(s0, lanes->s[0], sizeof s0);
	memcpy(s1, lanes->s[1], sizeof s1);
	memcpy(s2, lanes->s[2], sizeof s2);
	memcpy(s3, lanes->s[3], sizeof s3);
	for (size_t i = 0; i < m; i += SIM_LANES)
		for (int k = 0; k < SIM_LANES; k++) {
			raw[i + k] = rotl(s0[k] + s3[k], 23) + s0[k];
			uint64_t t = s1[k] << 17;
			s2[k] ^= s0[k];
			s3[k] ^= s1[k];
			s1[k] ^= s2[k];
			s0[k] ^= s3[k];
			s2[k] ^= t;
			s3[k] = rotl(s3[k], 45);
		}
	memcpy(lanes->s[0], s0, sizeof s0);
	memcpy(lanes->s[1], s1, sizeof s1);
	memcpy(lanes->s[2], s2, sizeof s2);
	memcpy(lanes->s[3], s3, sizeof s3);
}

/* n draws, in batches: the lanes' outputs, the common case for the whole
 * batch, then the rejected positions in order from lane 0. */
void sim_lanes_normals(sim_lanes *lanes, size_t n, double *out)
{
	pthread_once(&zig_once, zig_build);
	uint64_t raw[SIM_NORMAL_BATCH];
	for (size_t start = 0; start < n; start += SIM_NORMAL_BATCH) {
		size_t m = n - start < SIM_NORMAL_BATCH ? n - start : SIM_NORMAL_BATCH;
		lanes_fill(lanes, (m + SIM_LANES - 1) / SIM_LANES * SIM_LANES, raw);
		double *o = out + start;
		unsigned char bad[SIM_NORMAL_BATCH / ZIG_CHUNK];
		zig_accept(m, raw, o, bad);
		sim_rng lane0 = {{lanes->s[0][0], lanes->s[1][0], lanes->s[2][0], lanes->s[3][0]}};
		for (size_t c = 0; c * ZIG_CHUNK < m; c++) {
			if (!bad[c])
				continue;
			size_t end = m - c * ZIG_CHUNK < ZIG_CHUNK ? m : (c + 1) * ZIG_CHUNK;
			for (size_t i = c * ZIG_CHUNK; i < end; i++)
				if (isnan(o[i]))
					o[i] = zig_redraw(&lane0, raw[i]);
		}
		for (int w = 0; w < 4; w++)
			lanes->s[w][0] = lane0.s[w];
	}
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

/* x into a list of the most extreme values kept in order (descending for
 * the largest, ascending for the smallest); most values are not extreme and
 * cost one comparison. */
static void keep_extreme(double *list, int *count, double x, bool largest)
{
	int n = *count;
	if (n == SIM_STAT_EXTREMES && !(largest ? x > list[n - 1] : x < list[n - 1]))
		return;
	if (n < SIM_STAT_EXTREMES)
		n++;
	int i = n - 1;
	for (; i > 0 && (largest ? x > list[i - 1] : x < list[i - 1]); i--)
		list[i] = list[i - 1];
	list[i] = x;
	*count = n;
}

void sim_stat_add(sim_stat *s, double x)
{
	keep_extreme(s->lo, &s->nlo, x, false);
	keep_extreme(s->hi, &s->nhi, x, true);
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
	for (int i = 0; i < other->nlo; i++)
		keep_extreme(into->lo, &into->nlo, other->lo[i], false);
	for (int i = 0; i < other->nhi; i++)
		keep_extreme(into->hi, &into->nhi, other->hi[i], true);
}

double sim_stat_sd(const sim_stat *s)
{
	return s->n > 1 ? sqrt(s->m2 / (s->n - 1)) : 0;
}

double sim_stat_se(const sim_stat *s)
{
	return s->n > 1 ? sim_stat_sd(s) / sqrt(s->n) : 0;
}

double sim_stat_top_share(const sim_stat *s)
{
	if (!(s->m2 > 0))
		return 0;
	if (s->nlo == 0 || s->nhi == 0)
		return 1; /* the extremes are not known: assume the worst */
	double top = fmax(s->hi[0] - s->mean, s->mean - s->lo[0]);
	return fmin(1, top * top / s->m2);
}

static void drop_first(double *list, int *count)
{
	memmove(list, list + 1, (size_t)(*count - 1) * sizeof *list);
	*count -= 1;
}

/* Welford's update run backwards: n' = n - 1, mean' = mean - (x - mean)/n',
 * M2' = M2 - (x - mean)(x - mean').  The value comes off its side's list;
 * when n is small it may also sit in the other list, which is then wrong,
 * so callers remove values only from a large sample.  The subtraction loses
 * about eps M2 / M2' of M2' (a value 1e10 standard deviations out leaves
 * nothing of the rest's M2, which may come out negative or many times too
 * large), so a removal that leaves under 1e-8 of M2 is refused: false, and
 * s unchanged. */
static bool remove_farthest(sim_stat *s)
{
	bool high = s->hi[0] - s->mean >= s->mean - s->lo[0];
	double x = high ? s->hi[0] : s->lo[0];
	double n = s->n - 1;
	double mean = s->mean - (x - s->mean) / n;
	double m2 = s->m2 - (x - s->mean) * (x - mean);
	if (!(m2 >= 1e-8 * s->m2) || !isfinite(mean))
		return false;
	s->m2 = m2;
	s->mean = mean;
	s->n = n;
	if (high)
		drop_first(s->hi, &s->nhi);
	else
		drop_first(s->lo, &s->nlo);
	return true;
}

sim_stat sim_stat_without_extreme(const sim_stat *s)
{
	sim_stat r = *s;
	if (s->n >= 3 && s->nlo > 0 && s->nhi > 0)
		remove_farthest(&r);
	return r;
}

sim_stat sim_stat_tame(const sim_stat *s, double share, int *removed)
{
	sim_stat r = *s;
	*removed = 0;
	if (s->n < 4 * SIM_STAT_EXTREMES)
		return r;
	while (*removed < SIM_STAT_EXTREMES - 1 && sim_stat_top_share(&r) > share) {
		if (!remove_farthest(&r))
			return r; /* still dominated: the caller sees its top share */
		*removed += 1;
	}
	return r;
}
