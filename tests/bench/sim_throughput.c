/* sim_throughput.c - simulation throughput of `check` against a hand-written
 * C Euler loop (a benchmark, not a test: it measures and prints, it never
 * asserts a timing).
 *
 * Two models, both checked with f = log S (the engine's own differential):
 *   gbm     dS = mu S dt + sigma S dW; d log S = (mu - sigma^2/2) dt + sigma dW
 *   heston  dS = mu S dt + sqrt(v) S dW, dv = kappa (theta - v) dt + xi sqrt(v) dB,
 *           corr(W, B) = rho, full truncation (coefficients at max(x, 0));
 *           d log S = (mu - v/2) dt + sqrt(v) dW
 * itox runs `check d log(S) at ... over steps=N, paths=P` through
 * session_run() (the declarations untimed; compiling, the finite differences
 * and printing are inside the time, but are a small part of it).  The
 * hand-written loop does the same work with the coefficients typed in C: the
 * same generator (xoshiro256++ in SIM_LANES side-by-side streams, ziggurat
 * normals, src/sim.h), the same streams (lane k of block j of 256 paths uses
 * the seed jumped 8j + k times), the same two grids (N and N/2 steps on one
 * set of increments) and the same per-path statistics
 * (QV - I, the martingale residual, the covariations, f(T)), merged in block
 * order.  So both compute the same numbers, and the program prints both sets
 * of means side by side as evidence.  Throughput is path-steps (paths times N
 * fine steps) per second; ratios are itox / hand-written.  One thread and all
 * threads (omp_set_num_threads) in one run.
 *
 * Then the peak resident memory (wait4 ru_maxrss of a child process) of
 * `check` for 10^4, 10^5 and 10^6 paths of 100 steps: paths stream in rounds
 * of blocks, so it should not grow with the number of paths.
 *
 * Usage: sim_throughput [--steps N] [--paths P] [--reps R] [--no-memory]
 *        sim_throughput --only itox|hand gbm|heston [--steps N] [--paths P]
 *            one run of one side, one thread (for a profiler such as
 *            valgrind --tool=callgrind: instruction counts do not depend on
 *            the load of the machine)
 */
#define _DEFAULT_SOURCE

#include <math.h>
#include <stdbool.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/resource.h>
#include <sys/time.h>
#include <sys/wait.h>
#include <time.h>
#include <unistd.h>
#ifdef _OPENMP
#include <omp.h>
#endif

#include "bench_clock.h"
#include "session.h"
#include "sim.h"

enum { BLOCK = 256, ROUND = 32, MAXN = 2 };

static void set_threads(int n)
{
#ifdef _OPENMP
	omp_set_num_threads(n);
#else
	(void)n;
#endif
}

static int max_threads(void)
{
#ifdef _OPENMP
	return omp_get_num_procs();
#else
	return 1;
#endif
}

/* ------------------------------------------------------------------ the models */

typedef struct params {
	double S0, v0, mu, sigma, kappa, theta, xi, rho;
} params;

static const params gbm_params = {.S0 = 100, .mu = 0.05, .sigma = 0.2};
static const params heston_params = {.S0 = 100, .v0 = 0.04, .mu = 0.05, .kappa = 1.5, .theta = 0.04, .xi = 0.3,
				     .rho = -0.7};

static const char gbm_model[] = "param mu, sigma > 0\nnoise W\ndS = mu*S*dt + sigma*S*dW\nassume S > 0\n";
static const char heston_model[] =
	"param mu, kappa, theta, xi > 0\nparam rho in [-1, 1]\nnoise W, B\ncorr(W, B) = rho\n"
	"dS = mu*S*dt + sqrt(v)*S*dW\ndv = kappa*(theta - v)*dt + xi*sqrt(v)*dB\nassume S > 0, v > 0\n";
static const char gbm_point[] = "S=100, mu=0.05, sigma=0.2";
static const char heston_point[] = "S=100, v=0.04, mu=0.05, kappa=1.5, theta=0.04, xi=0.3, rho=-0.7";

/* The statistics both programs report: extrapolated means 2 S(h) - S(2h). */
typedef struct stats {
	double qv, resid, terminal, cov[MAXN];
	double paths;
} stats;

/* ------------------------------------------------------------------ itox */

/* The first number after key in text, or NAN. */
static double json_number(const char *text, const char *key)
{
	const char *at = text ? strstr(text, key) : NULL;
	return at ? strtod(at + strlen(key), NULL) : NAN;
}

/* One `check` through a session; returns seconds, or -1 on failure. */
static double itox_check(bool heston, long steps, long paths, stats *out)
{
	char *text = NULL;
	size_t length = 0;
	FILE *sink = open_memstream(&text, &length);
	FILE *errors = fopen("/dev/null", "w");
	session_options opt = {.out = sink, .err = errors, .format = FORMAT_JSON, .seed = 7};
	session *s = session_new(&opt);
	const char *model = heston ? heston_model : gbm_model;
	char statement[256];
	snprintf(statement, sizeof statement, "check d log(S) at %s over steps=%ld, paths=%ld, seed=7\n",
		 heston ? heston_point : gbm_point, steps, paths);
	double seconds = -1;
	if (session_run(s, model, strlen(model), "model") == SESSION_OK) {
		double start = now();
		int status = session_run(s, statement, strlen(statement), "check");
		fflush(sink);
		if (status == SESSION_OK || status == SESSION_FAILED)
			seconds = now() - start;
	}
	if (out && text) {
		out->qv = json_number(text, "\"qv\":{\"mean\":");
		out->resid = json_number(text, "\"residual\":{\"mean\":");
		out->terminal = json_number(text, "\"terminal\":{\"mean\":");
		out->cov[0] = json_number(text, "\"W\":{\"mean\":");
		out->cov[1] = heston ? json_number(text, "\"B\":{\"mean\":") : 0;
		out->paths = json_number(text, "\"paths_used\":");
	}
	session_free(s);
	fclose(sink);
	fclose(errors);
	free(text);
	return seconds;
}

/* ------------------------------------------------------------------ hand-written */

/* One grid of a block: the state, f, and the running sums of each path. */
typedef struct grid {
	long ratio, pending;
	double S[BLOCK], v[BLOCK], f[BLOCK], dw[MAXN][BLOCK];
	double qv[BLOCK], integ[BLOCK], resid[BLOCK], mag[BLOCK], cov[MAXN][BLOCK];
} grid;

typedef struct block_sums {
	sim_stat stat[3 + MAXN];
} block_sums;

/* One Euler step of size h on the paths of g, then the sums.  GBM: drift
 * mu S, diffusion sigma S; claim drift mu - sigma^2/2, claim b sigma. */
static void gbm_step(const params *p, grid *g, size_t n, double h)
{
	double claim_drift = p->mu + -0.5 * (p->sigma * p->sigma), b = p->sigma;
	for (size_t q = 0; q < n; q++) {
		double S = g->S[q], x = S < 0 ? 0 : S;
		S += p->mu * x * h;
		S += p->sigma * x * g->dw[0][q];
		g->S[q] = S;
		double f1 = log(S), df = f1 - g->f[q], dw = g->dw[0][q];
		double g2 = b * b, bdw = b * dw;
		g->cov[0][q] += df * dw - b * h;
		double mag = fabs(df * dw) + fabs(b) * h;
		g->qv[q] += df * df;
		g->integ[q] += g2 * h;
		g->resid[q] += df - claim_drift * h - bdw;
		g->mag[q] += mag + df * df + fabs(g2) * h + fabs(df) + fabs(claim_drift) * h + fabs(bdw);
		g->f[q] = f1;
	}
}

/* Heston with full truncation: coefficients at S+ = max(S, 0), v+ = max(v, 0). */
static void heston_step(const params *p, grid *g, size_t n, double h)
{
	for (size_t q = 0; q < n; q++) {
		double S = g->S[q], v = g->v[q];
		double Sp = S < 0 ? 0 : S, vp = v < 0 ? 0 : v, root = sqrt(vp);
		S += p->mu * Sp * h;
		S += root * Sp * g->dw[0][q];
		v += (p->kappa * p->theta + -(p->kappa * vp)) * h;
		v += p->xi * root * g->dw[1][q];
		g->S[q] = S;
		g->v[q] = v;
		/* the claim: drift mu - v+/2, b_W = sqrt(v+), b_B = 0 */
		double claim_drift = p->mu + -0.5 * vp, bw = root;
		double f1 = log(S), df = f1 - g->f[q], dW = g->dw[0][q], dB = g->dw[1][q];
		double cw = 1 * bw + p->rho * 0, cb = p->rho * bw + 1 * 0;
		double g2 = bw * cw + 0 * cb, bdw = bw * dW + 0 * dB;
		g->cov[0][q] += df * dW - cw * h;
		g->cov[1][q] += df * dB - cb * h;
		double mag = fabs(df * dW) + fabs(cw) * h + fabs(df * dB) + fabs(cb) * h;
		g->qv[q] += df * df;
		g->integ[q] += g2 * h;
		g->resid[q] += df - claim_drift * h - bdw;
		g->mag[q] += mag + df * df + fabs(g2) * h + fabs(df) + fabs(claim_drift) * h + fabs(bdw);
		g->f[q] = f1;
	}
}

static void grid_init(const params *p, grid *g, long ratio, size_t n)
{
	memset(g, 0, sizeof *g);
	g->ratio = ratio;
	for (size_t q = 0; q < n; q++) {
		g->S[q] = p->S0;
		g->v[q] = p->v0;
		g->f[q] = log(p->S0);
	}
}

/* B paths of one block over steps fine steps, both grids on the same
 * increments dW = sqrt(dt) L z. */
static void hand_block(bool heston, const params *p, sim_lanes *rng, size_t n, long steps, double dt,
		       block_sums *out)
{
	size_t nn = heston ? 2 : 1;
	double l[MAXN][MAXN] = {{1, 0}, {p->rho, sqrt(1 - p->rho * p->rho)}};
	double root = sqrt(dt);
	static _Thread_local grid grids[2];
	static _Thread_local double zbuf[MAXN * BLOCK];
	const double *z[MAXN] = {zbuf, zbuf + n}; /* noise a of path q: z[a][q], as check lays them out */
	for (int i = 0; i < 2; i++)
		grid_init(p, &grids[i], i + 1, n);
	for (long k = 0; k < steps; k++) {
		sim_lanes_normals(rng, nn * n, zbuf);
		for (int i = 0; i < 2; i++) {
			grid *g = &grids[i];
			for (size_t a = 0; a < nn; a++)
				for (size_t c = 0; c <= a; c++) {
					double lc = l[a][c] * root;
					if (lc != 0)
						for (size_t q = 0; q < n; q++)
							g->dw[a][q] += lc * z[c][q];
				}
			if (++g->pending == g->ratio || k == steps - 1) {
				double h = (double)g->pending * dt;
				if (heston)
					heston_step(p, g, n, h);
				else
					gbm_step(p, g, n, h);
				g->pending = 0;
				memset(g->dw, 0, sizeof g->dw);
			}
		}
	}
	memset(out, 0, sizeof *out);
	for (size_t q = 0; q < n; q++) {
		const grid *fine = &grids[0], *coarse = &grids[1];
		double x[3 + MAXN] = {2 * (fine->qv[q] - fine->integ[q]) - (coarse->qv[q] - coarse->integ[q]),
				      2 * fine->resid[q] - coarse->resid[q], 2 * fine->f[q] - coarse->f[q]};
		for (size_t a = 0; a < nn; a++)
			x[3 + a] = 2 * fine->cov[a][q] - coarse->cov[a][q];
		bool good = isfinite(fine->qv[q] + fine->integ[q] + fine->mag[q]);
		for (size_t i = 0; i < 3 + nn; i++)
			good = good && isfinite(x[i]);
		if (good)
			for (size_t i = 0; i < 3 + nn; i++)
				sim_stat_add(&out->stat[i], x[i]);
	}
}

static double hand_check(bool heston, long steps, long paths, stats *out)
{
	const params *p = heston ? &heston_params : &gbm_params;
	size_t nn = heston ? 2 : 1;
	double start = now();
	size_t nblocks = ((size_t)paths + BLOCK - 1) / BLOCK;
	sim_rng stream;
	sim_rng_seed(&stream, 7);
	sim_lanes rngs[ROUND];
	block_sums sums[ROUND];
	block_sums total;
	memset(&total, 0, sizeof total);
	for (size_t first = 0; first < nblocks; first += ROUND) {
		size_t count = nblocks - first < ROUND ? nblocks - first : ROUND;
		for (size_t i = 0; i < count; i++)
			sim_lanes_take(&rngs[i], &stream);
#ifdef _OPENMP
#pragma omp parallel for schedule(dynamic, 1)
#endif
		for (long i = 0; i < (long)count; i++) {
			size_t block = first + (size_t)i, left = (size_t)paths - block * BLOCK;
			hand_block(heston, p, &rngs[i], left < BLOCK ? left : BLOCK, steps, 1.0 / (double)steps,
				   &sums[i]);
		}
		for (size_t i = 0; i < count; i++)
			for (size_t k = 0; k < 3 + nn; k++)
				sim_stat_merge(&total.stat[k], &sums[i].stat[k]);
	}
	double seconds = now() - start;
	out->qv = total.stat[0].mean;
	out->resid = total.stat[1].mean;
	out->terminal = total.stat[2].mean;
	for (size_t a = 0; a < MAXN; a++)
		out->cov[a] = a < nn ? total.stat[3 + a].mean : 0;
	out->paths = total.stat[0].n;
	return seconds;
}

/* ------------------------------------------------------------------ the run */

static double median_time(bool itox, bool heston, long steps, long paths, int reps, stats *out)
{
	double times[16];
	if (reps > 16)
		reps = 16;
	for (int r = 0; r < reps; r++)
		times[r] = itox ? itox_check(heston, steps, paths, out) : hand_check(heston, steps, paths, out);
	return median(times, reps);
}

static void print_stats(const char *who, const stats *s)
{
	printf("    %-13s paths %.0f  QV-I %.10g  residual %.10g  f(T) %.10g  cov W %.10g  cov B %.10g\n", who,
	       s->paths, s->qv, s->resid, s->terminal, s->cov[0], s->cov[1]);
}

static void throughput(long steps, long paths, int reps)
{
	int all = max_threads();
	int threads[2] = {1, all};
	int nthreads = all > 1 ? 2 : 1;
	printf("== throughput: check d log(S), %ld steps x %ld paths = %.3g path-steps per run, median of %d\n", steps,
	       paths, (double)steps * (double)paths, reps);
	printf("%-7s %7s %12s %12s %16s %16s %8s\n", "model", "threads", "itox s", "hand s", "itox steps/s",
	       "hand steps/s", "ratio");
	for (int m = 0; m < 2; m++) {
		bool heston = m == 1;
		stats si = {0}, sh = {0};
		for (int t = 0; t < nthreads; t++) {
			set_threads(threads[t]);
			double ti = median_time(true, heston, steps, paths, reps, &si);
			double th = median_time(false, heston, steps, paths, reps, &sh);
			double work = (double)steps * (double)paths;
			printf("%-7s %7d %12.4f %12.4f %16.4g %16.4g %8.2f\n", heston ? "heston" : "gbm", threads[t], ti,
			       th, ti > 0 ? work / ti : NAN, work / th, ti > 0 ? th / ti : NAN);
		}
		printf("  same statistics (extrapolated means; itox from its JSON, %%.10g):\n");
		print_stats("itox", &si);
		print_stats("hand-written", &sh);
	}
	set_threads(all);
}

/* Peak resident set of a fresh process (this program run again with
 * --memory-child: a plain fork would inherit the OpenMP thread pool, which
 * libgomp does not support) that runs one check of `paths` paths. */
static long child_peak_kb(long steps, long paths, double *seconds)
{
	char steps_text[32], paths_text[32];
	snprintf(steps_text, sizeof steps_text, "%ld", steps);
	snprintf(paths_text, sizeof paths_text, "%ld", paths);
	double start = now();
	pid_t pid = fork();
	if (pid == 0) {
		execl("/proc/self/exe", "sim_throughput", "--memory-child", steps_text, paths_text, (char *)NULL);
		_exit(127);
	}
	int status = 0;
	struct rusage usage;
	if (pid < 0 || wait4(pid, &status, 0, &usage) < 0 || !WIFEXITED(status) || WEXITSTATUS(status) != 0)
		return -1;
	*seconds = now() - start;
	return usage.ru_maxrss;
}

static void memory(void)
{
	const long steps = 100;
	printf("\n== peak resident memory of check (gbm, %ld steps, %d threads; child process, ru_maxrss)\n", steps,
	       max_threads());
	printf("%9s %12s %10s\n", "paths", "peak KiB", "seconds");
	for (long paths = 10000; paths <= 1000000; paths *= 10) {
		double seconds = 0;
		long kb = child_peak_kb(steps, paths, &seconds);
		printf("%9ld %12ld %10.2f\n", paths, kb, seconds);
	}
}

int main(int argc, char **argv)
{
	long steps = 1000, paths = 20000;
	int reps = 3;
	bool mem = true;
	const char *only = NULL, *only_model = NULL;
	for (int i = 1; i < argc; i++) {
		if (strcmp(argv[i], "--memory-child") == 0 && i + 2 < argc)
			return itox_check(false, atol(argv[i + 1]), atol(argv[i + 2]), NULL) < 0;
		if (strcmp(argv[i], "--only") == 0 && i + 2 < argc) {
			only = argv[++i];
			only_model = argv[++i];
		} else if (strcmp(argv[i], "--steps") == 0 && i + 1 < argc)
			steps = atol(argv[++i]);
		else if (strcmp(argv[i], "--paths") == 0 && i + 1 < argc)
			paths = atol(argv[++i]);
		else if (strcmp(argv[i], "--reps") == 0 && i + 1 < argc)
			reps = atoi(argv[++i]);
		else if (strcmp(argv[i], "--no-memory") == 0)
			mem = false;
		else {
			fprintf(stderr, "usage: sim_throughput [--steps N] [--paths P] [--reps R] [--no-memory]\n");
			return 2;
		}
	}
	if (steps < 2 || paths < 2 || reps < 1) {
		fprintf(stderr, "sim_throughput: need steps >= 2, paths >= 2, reps >= 1\n");
		return 2;
	}
	if (only) {
		bool heston = strcmp(only_model, "heston") == 0;
		stats st = {0};
		set_threads(1);
		double seconds = strcmp(only, "itox") == 0 ? itox_check(heston, steps, paths, &st)
							   : hand_check(heston, steps, paths, &st);
		printf("%s %s: %.4f s\n", only, heston ? "heston" : "gbm", seconds);
		print_stats(only, &st);
		return seconds < 0;
	}
	throughput(steps, paths, reps);
	if (mem)
		memory();
	return 0;
}
