/* check_sim.c - unit tests of the numerical core under `check`: the
 * ziggurat's layers and the distribution of its draws, the side-by-side
 * streams and batches of the generator, the block logarithm against libm,
 * and uniform variables and direct outputs of compiled programs against a
 * plain evaluation.
 *
 * Sources: the layer equations of the ziggurat are those of Marsaglia and
 * Tsang, "The Ziggurat Method for Generating Random Variables", J. Stat.
 * Software 5(8), 2000, section 2 (from memory); the moments of the standard
 * normal (mean 0, variance 1, fourth moment 3) and the tail probability
 * P(|Z| > a) = erfc(a/sqrt 2) are handbook facts (Abramowitz and Stegun,
 * 26.2, from memory); the Kolmogorov-Smirnov bound sqrt(n) D < 1.95 at level
 * 0.001 is the asymptotic Kolmogorov distribution's quantile (from memory).
 * The reference for the logarithm is the C library's log.  Every
 * statistical test uses a fixed seed and a bound at about five standard
 * errors, so it is deterministic and fails only for a real fault: a start
 * of the tail r off by 1e-7, a biased uniform and a lost sign bit were each
 * seen to fail it, as were a logarithm coefficient off by 1e-5, a wrong
 * reduction boundary and a variable wrongly taken as uniform. */

#include <check.h>
#include <float.h>
#include <math.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include "check_suites.h"
#include "eval.h"
#include "expr.h"
#include "sim.h"

static double gauss(double x)
{
	return exp(-0.5 * x * x);
}

/* Every layer has the same area v: the bottom one x[0] f(r) (rectangle and
 * tail), the others x[i] (f(x[i+1]) - f(x[i])); the top one closes at 0. */
START_TEST(test_ziggurat_layers)
{
	double r, v;
	const double *x = sim_ziggurat_x(&r, &v);
	ck_assert_double_eq_tol(r, 3.6541528853610088, 1e-15);
	double tail = 1.2533141373155002512 * erfc(r / sqrt(2.0)); /* integral of f beyond r */
	ck_assert_double_eq_tol(v, r * gauss(r) + tail, 1e-18);
	ck_assert_double_eq_tol(x[0] * gauss(r), v, 1e-15);
	ck_assert(x[1] == r);
	ck_assert(x[SIM_ZIG_LAYERS] == 0);
	for (int i = 1; i < SIM_ZIG_LAYERS; i++) {
		ck_assert_msg(x[i + 1] < x[i], "layer %d does not shrink", i);
		double area = x[i] * (gauss(x[i + 1]) - gauss(x[i]));
		ck_assert_msg(fabs(area - v) < 1e-9 * v, "layer %d: area %.17g, v %.17g", i, area, v);
	}
}
END_TEST

/* n normals from the lanes taken from the stream of seed. */
static void draw(uint64_t seed, size_t n, double *z)
{
	sim_rng stream;
	sim_lanes lanes;
	sim_rng_seed(&stream, seed);
	sim_lanes_take(&lanes, &stream);
	sim_lanes_normals(&lanes, n, z);
}

static int compare_doubles(const void *a, const void *b)
{
	double x = *(const double *)a, y = *(const double *)b;
	return (x > y) - (x < y);
}

START_TEST(test_normal_distribution)
{
	enum { n = 1 << 20 };
	double *z = malloc(n * sizeof *z);
	ck_assert_ptr_nonnull(z);
	draw(20261202, n, z);
	double r, v;
	sim_ziggurat_x(&r, &v);
	double m1 = 0, m2 = 0, m4 = 0;
	long beyond3 = 0, beyond_r = 0, negative = 0;
	for (size_t i = 0; i < n; i++) {
		double x = z[i];
		ck_assert(isfinite(x));
		m1 += x, m2 += x * x, m4 += x * x * x * x;
		beyond3 += fabs(x) > 3;
		beyond_r += fabs(x) > r;
		negative += x < 0;
	}
	m1 /= n, m2 /= n, m4 /= n;
	ck_assert_msg(fabs(m1) < 5 * sqrt(1.0 / n), "mean %g", m1);
	ck_assert_msg(fabs(m2 - 1) < 5 * sqrt(2.0 / n), "variance %g", m2);
	ck_assert_msg(fabs(m4 - 3) < 5 * sqrt(96.0 / n), "fourth moment %g", m4); /* var of z^4 = 105 - 9 */
	ck_assert_msg(fabs(negative - n / 2.0) < 5 * sqrt(n / 4.0), "%ld negative of %d", negative, n);
	/* the tail beyond 3 and beyond r (drawn by the tail method) */
	double p3 = erfc(3 / sqrt(2.0)), pr = erfc(r / sqrt(2.0));
	ck_assert_msg(fabs(beyond3 - n * p3) < 5 * sqrt(n * p3), "%ld beyond 3, expected %g", beyond3, n * p3);
	ck_assert_msg(beyond_r > 0 && fabs(beyond_r - n * pr) < 5 * sqrt(n * pr), "%ld beyond r, expected %g",
		      beyond_r, n * pr);
	/* Kolmogorov-Smirnov against the normal distribution function */
	qsort(z, n, sizeof *z, compare_doubles);
	double d = 0;
	for (size_t i = 0; i < n; i++) {
		double cdf = eval_ncdf(z[i]);
		d = fmax(d, fmax(fabs(cdf - (double)i / n), fabs(cdf - (double)(i + 1) / n)));
	}
	ck_assert_msg(sqrt((double)n) * d < 1.95, "KS sqrt(n) D = %g", sqrt((double)n) * d);
	free(z);
}
END_TEST

/* Consecutive draws are uncorrelated: lag-1 (neighbouring lanes), lag-8
 * (one lane) and lag-256 (one block of paths) products have mean 0 and
 * standard error 1/sqrt(n). */
START_TEST(test_normal_independence)
{
	enum { n = 1 << 20 };
	double *z = malloc(n * sizeof *z);
	ck_assert_ptr_nonnull(z);
	draw(7, n, z);
	size_t lags[] = {1, SIM_LANES, SIM_NORMAL_BATCH};
	for (size_t li = 0; li < 3; li++) {
		size_t lag = lags[li];
		double c = 0;
		for (size_t i = lag; i < n; i++)
			c += z[i] * z[i - lag];
		c /= n - lag;
		ck_assert_msg(fabs(c) < 5 / sqrt((double)n), "lag %zu correlation %g", lag, c);
	}
	free(z);
}
END_TEST

/* Lane k starts where the stream jumped k times starts, and the stream
 * moves on by SIM_LANES jumps; calls whose lengths are multiples of the
 * batch give the numbers of one call (sim.h), whatever the split. */
START_TEST(test_normal_lanes)
{
	sim_rng stream, expect;
	sim_rng_seed(&stream, 99);
	sim_rng_seed(&expect, 99);
	sim_lanes a;
	sim_lanes_take(&a, &stream);
	for (int k = 0; k < SIM_LANES; k++) {
		for (int w = 0; w < 4; w++)
			ck_assert_uint_eq(a.s[w][k], expect.s[w]);
		sim_rng_jump(&expect);
	}
	ck_assert_mem_eq(stream.s, expect.s, sizeof stream.s);
	enum { n = 4 * SIM_NORMAL_BATCH + 100 };
	double one[n], split[n];
	sim_lanes b = a;
	sim_lanes_normals(&a, n, one);
	sim_lanes_normals(&b, SIM_NORMAL_BATCH, split);
	sim_lanes_normals(&b, 2 * SIM_NORMAL_BATCH, split + SIM_NORMAL_BATCH);
	sim_lanes_normals(&b, SIM_NORMAL_BATCH, split + 3 * SIM_NORMAL_BATCH);
	sim_lanes_normals(&b, 100, split + 4 * SIM_NORMAL_BATCH);
	ck_assert_mem_eq(one, split, sizeof one);
	ck_assert_mem_eq(a.s, b.s, sizeof a.s);
}
END_TEST

static long ulps_apart(double x, double y)
{
	int64_t a, b;
	memcpy(&a, &x, sizeof a);
	memcpy(&b, &y, sizeof b);
	if ((a < 0) != (b < 0))
		return x == y ? 0 : LONG_MAX;
	return labs((long)(a - b));
}

/* log over a block is within one unit in the last place of libm's log, on
 * numbers across the whole exponent range, near 1 (where log is small and
 * the relative error counts) and near sqrt(2) (the reduction's boundary);
 * the special inputs give libm's results. */
START_TEST(test_block_log)
{
	expr_ctx *ctx = expr_ctx_new();
	const expr *x = expr_sym(ctx, "x");
	const expr *f = expr_fun(ctx, EXPR_F_LOG, x);
	eval_prog *prog = eval_compile(ctx, 1, &f, 1, &x, NULL);
	ck_assert_ptr_nonnull(prog);
	enum { n = 200000 };
	double *in = malloc(n * sizeof *in), *out = malloc(n * sizeof *out);
	sim_rng rng;
	sim_rng_seed(&rng, 5);
	for (size_t i = 0; i < n; i++) {
		double u = sim_uniform(&rng);
		switch (i % 4) {
		case 0: in[i] = ldexp(1 + u, (int)(sim_rng_next(&rng) % 2044) - 1022); break;
		case 1: in[i] = 1 + ldexp(u - 0.5, -(int)(sim_rng_next(&rng) % 52)); break;
		case 2: in[i] = 1.41421356237309504880 * (1 + ldexp(u - 0.5, -(int)(sim_rng_next(&rng) % 52))); break;
		default: in[i] = 0.5 + 1.5 * u; break;
		}
	}
	eval_run(prog, n, in, out);
	long worst = 0;
	double at = 0;
	for (size_t i = 0; i < n; i++) {
		long d = ulps_apart(out[i], log(in[i]));
		if (d > worst)
			worst = d, at = in[i];
	}
	ck_assert_msg(worst <= 1, "log differs from libm by %ld ulp at %.17g", worst, at);
	double special[] = {0, -0.0, -1, INFINITY, -INFINITY, NAN, 4.9e-324, 1e-310, DBL_MIN, DBL_MAX, 1, 2};
	size_t ns = sizeof special / sizeof *special;
	double got[sizeof special / sizeof *special];
	eval_run(prog, ns, special, got);
	for (size_t i = 0; i < ns; i++) {
		double want = log(special[i]);
		ck_assert_msg((isnan(want) && isnan(got[i])) || got[i] == want, "log(%g) = %.17g, libm %.17g",
			      special[i], got[i], want);
	}
	free(in);
	free(out);
	eval_free(prog);
	expr_ctx_free(ctx);
}
END_TEST

/* Declaring the parameters uniform changes no bit of any output: outputs
 * that vary (written in place), uniform ones (filled), one output twice, a
 * variable as an output; over more points than one block. */
START_TEST(test_uniform_variables)
{
	expr_ctx *ctx = expr_ctx_new();
	const expr *vars[] = {expr_sym(ctx, "S"), expr_sym(ctx, "v"), expr_sym(ctx, "t"), expr_sym(ctx, "mu"),
			      expr_sym(ctx, "xi")};
	const expr *S = vars[0], *v = vars[1], *t = vars[2], *mu = vars[3], *xi = vars[4];
	const expr *half = expr_rat(ctx, 1, 2);
	const expr *drift = expr_mul(ctx, expr_sub(ctx, mu, expr_mul(ctx, half, v)), S);
	const expr *claim = expr_sub(ctx, mu, expr_mul(ctx, half, expr_pow(ctx, xi, expr_int(ctx, 2))));
	const expr *decay = expr_mul(ctx, S, expr_fun(ctx, EXPR_F_EXP, expr_neg(ctx, expr_mul(ctx, mu, t))));
	const expr *outs[] = {drift, claim, decay, drift, v, expr_pow_rat(ctx, v, 1, 2), mu,
			      /* uniform operands in every position of sums, products and powers */
			      expr_add(ctx, expr_add(ctx, S, v), expr_mul(ctx, xi, mu)),
			      expr_mul(ctx, expr_mul(ctx, S, v), mu), expr_mul(ctx, expr_int(ctx, 3), expr_mul(ctx, mu, S)),
			      expr_mul(ctx, expr_int(ctx, 3), expr_mul(ctx, mu, xi)), expr_pow(ctx, S, mu),
			      expr_pow(ctx, mu, v), expr_add(ctx, xi, expr_fun(ctx, EXPR_F_LOG, v)),
			      /* two uniform operands first, then one per point (mu, t sort before v) */
			      expr_mul(ctx, expr_mul(ctx, mu, t), v), expr_add(ctx, expr_add(ctx, mu, t), v),
			      expr_mul(ctx, expr_int(ctx, 3), expr_mul(ctx, expr_mul(ctx, mu, t), v))};
	size_t nout = sizeof outs / sizeof *outs, nvars = sizeof vars / sizeof *vars;
	eval_prog *plain = eval_compile(ctx, nout, outs, nvars, vars, NULL);
	eval_prog *uniform = eval_compile(ctx, nout, outs, nvars, vars, NULL);
	ck_assert_ptr_nonnull(plain);
	ck_assert_ptr_nonnull(uniform);
	eval_set_uniform(uniform, 2); /* t, mu, xi */
	enum { n = 300 };
	double *in = malloc(nvars * n * sizeof *in);
	double *a = malloc(nout * n * sizeof *a), *b = malloc(nout * n * sizeof *b);
	sim_rng rng;
	sim_rng_seed(&rng, 11);
	for (size_t q = 0; q < n; q++) {
		in[0 * n + q] = 50 + 100 * sim_uniform(&rng);
		in[1 * n + q] = 0.01 + 0.1 * sim_uniform(&rng);
		in[2 * n + q] = 0.25;
		in[3 * n + q] = 0.05;
		in[4 * n + q] = 0.3;
	}
	/* the plain program first runs at other parameter values, so that the
	 * registers it leaves on the stack cannot stand in for values the
	 * uniform program should have computed */
	for (size_t q = 0; q < n; q++)
		in[3 * n + q] = 0.07, in[4 * n + q] = 0.4;
	eval_run(plain, n, in, a);
	for (size_t q = 0; q < n; q++)
		in[3 * n + q] = 0.05, in[4 * n + q] = 0.3;
	eval_run(uniform, n, in, b);
	eval_run(plain, n, in, a);
	ck_assert_mem_eq(a, b, nout * n * sizeof *a);
	/* and the plain program is the formula, point by point */
	for (size_t q = 0; q < n; q += 37) {
		double s = in[q], vq = in[n + q];
		ck_assert_double_eq_tol(a[q], (0.05 - 0.5 * vq) * s, 1e-12 * s);
		ck_assert_double_eq_tol(a[n + q], 0.05 - 0.5 * 0.09, 1e-15);
		ck_assert_double_eq_tol(a[2 * n + q], s * exp(-0.05 * 0.25), 1e-12 * s);
		ck_assert(a[3 * n + q] == a[q]);
		ck_assert(a[4 * n + q] == vq);
		ck_assert(a[5 * n + q] == sqrt(vq));
		ck_assert(a[6 * n + q] == 0.05);
	}
	free(in);
	free(a);
	free(b);
	eval_free(plain);
	eval_free(uniform);
	expr_ctx_free(ctx);
}
END_TEST

/* Mean and sum of squared deviations of the values not flagged gone, by
 * the plain two-pass formulas (common practice, no source). */
static void two_pass(const double *x, const bool *gone, size_t n, double *count, double *mean, double *m2)
{
	double sum = 0, k = 0, sq = 0;
	for (size_t i = 0; i < n; i++)
		if (!gone[i]) {
			sum += x[i];
			k += 1;
		}
	*mean = sum / k;
	for (size_t i = 0; i < n; i++)
		if (!gone[i])
			sq += (x[i] - *mean) * (x[i] - *mean);
	*count = k;
	*m2 = sq;
}

/* Running statistics merged from blocks of uneven sizes (Chan, Golub and
 * LeVeque's pairwise update, from memory) against two passes over the
 * whole sample; the kept extremes against a sort; and trimming against
 * removing, one at a time, the value farthest from the mean of those left
 * and recomputing everything from scratch; and no removal where the rest is
 * lost to rounding. */
START_TEST(test_stat_trim)
{
	enum { N = 5000 };
	double *x = malloc(N * sizeof *x);
	bool *gone = calloc(N, sizeof *gone);
	sim_rng stream;
	sim_rng_seed(&stream, 99);
	sim_lanes lanes;
	sim_lanes_take(&lanes, &stream);
	sim_lanes_normals(&lanes, N, x);
	/* heavy tails: a few values far out on both sides */
	x[17] = 900, x[1234] = -400, x[2500] = 650, x[4999] = 300, x[3] = -250;
	sim_stat total = {0};
	for (size_t start = 0, size = 1; start < N; start += size, size = size * 3 % 1001 + 1) {
		sim_stat block = {0};
		for (size_t i = start; i < N && i < start + size; i++)
			sim_stat_add(&block, x[i]);
		sim_stat_merge(&total, &block);
	}
	double count, mean, m2;
	two_pass(x, gone, N, &count, &mean, &m2);
	ck_assert(total.n == count);
	ck_assert_double_eq_tol(total.mean, mean, 1e-12 * fabs(mean) + 1e-15);
	ck_assert_double_eq_tol(total.m2, m2, 1e-10 * m2);
	ck_assert_int_eq(total.nhi, SIM_STAT_EXTREMES);
	ck_assert(total.hi[0] == 900 && total.hi[1] == 650 && total.hi[2] == 300);
	ck_assert(total.lo[0] == -400 && total.lo[1] == -250);
	for (int i = 1; i < SIM_STAT_EXTREMES; i++)
		ck_assert(total.hi[i] <= total.hi[i - 1] && total.lo[i] >= total.lo[i - 1]);
	ck_assert_double_eq_tol(sim_stat_top_share(&total), pow(900 - mean, 2) / m2, 1e-12);

	int removed;
	sim_stat tamed = sim_stat_tame(&total, 0.01, &removed);
	int expect = 0;
	for (;;) {
		two_pass(x, gone, N, &count, &mean, &m2);
		size_t far = 0;
		double top = -1;
		for (size_t i = 0; i < N; i++)
			if (!gone[i] && fabs(x[i] - mean) > top)
				top = fabs(x[i] - mean), far = i;
		if (top * top / m2 <= 0.01 || expect == SIM_STAT_EXTREMES - 1)
			break;
		gone[far] = true;
		expect++;
	}
	ck_assert_int_eq(removed, expect);
	ck_assert_int_eq(removed, 5); /* the five planted values, then a normal sample */
	ck_assert(tamed.n == count);
	ck_assert_double_eq_tol(tamed.mean, mean, 1e-9);
	ck_assert_double_eq_tol(tamed.m2, m2, 1e-9 * m2);
	ck_assert(sim_stat_top_share(&tamed) <= 0.01);
	sim_stat one = sim_stat_without_extreme(&total);
	ck_assert(one.n == N - 1 && one.hi[0] == 650);

	/* A value 1e12 standard deviations out: removing it from the sums
	 * would leave the rest's M2 to rounding (seen as many times too large,
	 * or negative), so it is refused and the statistic stays dominated. */
	sim_stat far = {0};
	for (size_t i = 0; i < N; i++)
		sim_stat_add(&far, i == 4000 ? 1e12 : x[i] * 1e-3);
	sim_stat kept = sim_stat_tame(&far, 0.01, &removed);
	ck_assert_int_eq(removed, 0);
	ck_assert(kept.n == N && kept.m2 == far.m2);
	ck_assert(sim_stat_top_share(&kept) > 0.99);
	ck_assert(sim_stat_without_extreme(&far).n == N);
	free(x);
	free(gone);
}
END_TEST

Suite *sim_suite(void)
{
	Suite *suite = suite_create("sim");
	TCase *tc = tcase_create("numerics");
	tcase_set_timeout(tc, 120);
	tcase_add_test(tc, test_ziggurat_layers);
	tcase_add_test(tc, test_normal_distribution);
	tcase_add_test(tc, test_normal_independence);
	tcase_add_test(tc, test_normal_lanes);
	tcase_add_test(tc, test_block_log);
	tcase_add_test(tc, test_uniform_variables);
	tcase_add_test(tc, test_stat_trim);
	suite_add_tcase(suite, tc);
	return suite;
}
