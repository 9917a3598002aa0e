/* sim-paths.c - paths of a system of SDEs and the statistics of a claimed
 * differential along them (see sim-paths.h).
 *
 * Claim under test: df = a dt + sum_k b_k dW_k, with dW_k dW_l = rho_kl dt.
 *
 * Simulation.  Euler-Maruyama (or Milstein) paths of the processes f needs,
 * from the point, over [t0, t0 + T] with N steps of size h.  Along each path:
 *   QV - I  = sum (f(X_k+1) - f(X_k))^2 - sum g(X_k)^2 h,   g^2 = sum_kl b_k b_l rho_kl
 *   M       = f(X_N) - f(X_0) - sum a(X_k) h - sum_k b_k(X_k) dW_k
 *   C_k     = sum (f(X_k+1) - f(X_k)) dW_k - sum (sum_l rho_kl b_l(X_k)) h
 * Each has mean zero when the claim is right, up to the discretisation.  The
 * term sum b dW in M has mean zero whatever b is (dW_k is independent of X_k),
 * so it is a control variate (Glasserman, Monte Carlo Methods in Financial
 * Engineering, 4.1, from memory): it leaves the mean alone and, when b is
 * right, removes the martingale part from the variance, so a wrong drift shows
 * clearly.  C_k tests each coefficient with its sign, which QV cannot see.
 *
 * Discretisation bias.  Conditionally on X_k one step of the scheme gives
 * E[(df)^2] - g^2 h = O(h^2) and E[df] - a h = O(h^2), so all statistics have
 * a bias c*h + O(h^2).  Every path is run on three grids driven by the same
 * Brownian increments (common random numbers): N steps, N/2 and N/4 (pairs
 * and quadruples of increments summed).  The statistic tested is the
 * Richardson combination R(h) = 2 S(h) - S(2h), whose bias is O(h^2) (Talay
 * and Tubaro's expansion of the weak error; Kloeden and Platen, 14.6, from
 * memory).  Its remaining bias is bounded from the same paths by the changes
 * between the grids, D1 = S(h) - S(2h) (the size of the first-order bias the
 * combination removes) and D2 = R(h) - R(2h) (the change of the combination
 * itself, about three times its own bias when the expansion holds); check.c
 * puts the larger, with its standard error, into the tolerance.
 *
 * Domain.  A step of Euler's scheme can take a state that stays positive
 * (a square-root diffusion under Feller's condition) below 0.  Two of the
 * fixes compared by Lord, Koekkoek and van Dijk ("A comparison of biased
 * simulation schemes for stochastic volatility models", Quantitative Finance
 * 10(2), 2010, from memory) are used.  States assumed nonnegative (x >= 0)
 * get full truncation: the state may go below 0, but the coefficients of the
 * SDEs, those of the claim and f itself see max(x, 0) (the scheme they found
 * least biased).  States assumed positive (x > 0) get reflection, x := |x|
 * after each step (the symmetrised Euler scheme; for the CIR process,
 * Berkaoui, Bossy and Diop, ESAIM: Probability and Statistics 12, 2008, from
 * memory), which keeps them in the open domain, where f and a claim such as
 * d sqrt(v) = (c/sqrt(v) - ...) dt + ... are finite (at 0 they are not).
 * The bias either fix adds is part of what the grids measure.  Paths whose
 * statistics are still not finite (f undefined, overflow) are counted and
 * left out; check.c then calls the verdict undecided.
 *
 * Threads.  Paths run in blocks of SIM_PATHS_BLOCK; block j draws from SIM_LANES
 * streams side by side, the seed's stream jumped j SIM_LANES + k times for
 * lane k (xoshiro256++ jump, sim.h), and block results are merged in block
 * order, so the result does not depend on the number of threads.
 * Blocks run in rounds of SIM_PATHS_ROUND, so memory does not grow with paths.
 * Progress is reported after every block the calling thread (OpenMP thread 0,
 * the only one that calls back) finishes, so the first report does not wait
 * for a whole round.
 */
#include <config.h>

#include "sim-paths.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>
#ifdef _OPENMP
#include <omp.h>
#endif

#include "vector.h"
#include "xalloc.h"

enum { SIM_PATHS_BLOCK = 256, SIM_PATHS_ROUND = 32 };
const long sim_paths_conv_steps[SIM_PATHS_NCONV] = {10, 100, 1000, 10000};

/* One discretisation of a block of paths; it steps every `ratio` fine steps
 * with the sum of their Brownian increments. */
typedef struct scheme {
	long ratio, pending;
	double t;
	double *x, *vars, *cout, *claim, *fcur, *fnext, *dw; /* x: nvars rows, as vars */
	double *qv, *integ, *resid, *fv, *cov, *mag;
	double *work; /* 5 B: step_stats' per-path scratch */
	unsigned char *below;
} scheme;

/* s->vars := the states as the coefficients and f see them (max(x, 0) for
 * truncated states) and the time; it has the layout of the programs'
 * variables (states, t, parameters). */
ITOX_VECTOR static void scheme_truncate(const sim_paths_model *p, scheme *s, size_t B)
{
	size_t np = p->nproc;
	for (size_t i = 0; i < np; i++) {
		const double *restrict x = s->x + i * B;
		double *restrict v = s->vars + i * B;
		if (p->truncate[i] == SIM_PATHS_TRUNCATE)
			ITOX_INDEPENDENT
		for (size_t q = 0; q < B; q++)
			v[q] = x[q] < 0 ? 0 : x[q];
		else memcpy(v, x, B * sizeof *v);
	}
	double *restrict tv = s->vars + np * B;
	ITOX_INDEPENDENT
	for (size_t q = 0; q < B; q++)
		tv[q] = s->t;
}

static void scheme_init(const sim_paths_model *p, scheme *s, size_t B, long ratio)
{
	size_t np = p->nproc, nn = p->nnoise;
	s->ratio = ratio;
	s->pending = 0;
	s->t = p->point[np];
	s->x = xmalloc(np * B * sizeof *s->x + 1);
	s->vars = xmalloc(p->nvars * B * sizeof *s->vars);
	s->cout = xmalloc((p->ncoef + 1) * B * sizeof *s->cout);
	s->claim = xmalloc(p->nclaim * B * sizeof *s->claim);
	s->fcur = xmalloc(B * sizeof *s->fcur);
	s->fnext = xmalloc(B * sizeof *s->fnext);
	s->dw = xcalloc((nn + 1) * B, sizeof *s->dw);
	s->qv = xcalloc(B, sizeof *s->qv);
	s->integ = xcalloc(B, sizeof *s->integ);
	s->resid = xcalloc(B, sizeof *s->resid);
	s->fv = xcalloc(B, sizeof *s->fv);
	s->mag = xcalloc(B, sizeof *s->mag);
	s->cov = xcalloc((nn + 1) * B, sizeof *s->cov);
	s->below = xcalloc(B, sizeof *s->below);
	s->work = xmalloc(5 * B * sizeof *s->work);
	for (size_t i = 0; i < np; i++)
		for (size_t q = 0; q < B; q++)
			s->x[i * B + q] = p->point[i];
	for (size_t v = np + 1; v < p->nvars; v++)
		for (size_t q = 0; q < B; q++)
			s->vars[v * B + q] = p->point[v];
	scheme_truncate(p, s, B);
	eval_run(p->fprog, B, s->vars, s->fcur);
}

static void scheme_free(scheme *s)
{
	free(s->x);
	free(s->vars);
	free(s->cout);
	free(s->claim);
	free(s->fcur);
	free(s->fnext);
	free(s->dw);
	free(s->qv);
	free(s->integ);
	free(s->resid);
	free(s->fv);
	free(s->mag);
	free(s->cov);
	free(s->below);
	free(s->work);
}

/* The per-path sums of one step: df = f(X_next) - f(X), the realised QV
 * against the integral of g'Rg, the martingale residual, the covariation
 * with each noise, the first variation and the rounding magnitude.  Written
 * as passes over the block (one per noise), each a plain loop the compiler
 * vectorises. */
ITOX_VECTOR static void step_stats(const sim_paths_model *p, scheme *s, size_t B, double h)
{
	size_t nn = p->nnoise;
	const double *restrict f0 = s->fcur, *restrict f1 = s->fnext, *restrict drift = s->claim;
	double *restrict df = s->work, *restrict g2 = df + B, *restrict bdw = g2 + B, *restrict mag = bdw + B;
	double *restrict ca = mag + B;
	ITOX_INDEPENDENT
	for (size_t q = 0; q < B; q++) {
		df[q] = f1[q] - f0[q];
		g2[q] = bdw[q] = mag[q] = 0;
	}
	for (size_t a = 0; a < nn; a++) {
		const double *restrict ba = s->claim + (1 + a) * B, *restrict dwa = s->dw + a * B;
		double *restrict cov = s->cov + a * B;
		ITOX_INDEPENDENT
		for (size_t q = 0; q < B; q++)
			ca[q] = 0;
		for (size_t b = 0; b < nn; b++) {
			const double rho = p->rho[a * nn + b], *restrict bb = s->claim + (1 + b) * B;
			ITOX_INDEPENDENT
			for (size_t q = 0; q < B; q++)
				ca[q] += rho * bb[q];
		}
		ITOX_INDEPENDENT
		for (size_t q = 0; q < B; q++) {
			g2[q] += ba[q] * ca[q];
			bdw[q] += ba[q] * dwa[q];
			cov[q] += df[q] * dwa[q] - ca[q] * h;
			mag[q] += fabs(df[q] * dwa[q]) + fabs(ca[q]) * h;
		}
	}
	double *restrict qv = s->qv, *restrict integ = s->integ, *restrict resid = s->resid;
	double *restrict fv = s->fv, *restrict magsum = s->mag;
	ITOX_INDEPENDENT
	for (size_t q = 0; q < B; q++) {
		double d = df[q];
		qv[q] += d * d;
		integ[q] += g2[q] * h;
		resid[q] += d - drift[q] * h - bdw[q];
		fv[q] += fabs(d);
		magsum[q] += mag[q] + d * d + fabs(g2[q]) * h + fabs(d) + fabs(drift[q]) * h + fabs(bdw[q]) +
		             fabs(f0[q]);
	}
}

/* step_stats for one noise: the same operations in the same order (so the
 * same bits) in one pass. */
ITOX_VECTOR static void step_stats_one_noise(const sim_paths_model *p, scheme *s, size_t B, double h)
{
	const double *restrict f0 = s->fcur, *restrict drift = s->claim, *restrict f1 = s->fnext;
	const double *restrict b0 = s->claim + B, *restrict dw0 = s->dw;
	double *restrict cov = s->cov, *restrict qv = s->qv, *restrict integ = s->integ;
	double *restrict resid = s->resid, *restrict fv = s->fv, *restrict magsum = s->mag;
	const double rho = p->rho[0];
	ITOX_INDEPENDENT
	for (size_t q = 0; q < B; q++) {
		double df = f1[q] - f0[q], ba = b0[q], dwa = dw0[q];
		double ca = 0 + rho * ba;
		double g2 = 0 + ba * ca, bdw = 0 + ba * dwa;
		cov[q] += df * dwa - ca * h;
		double mag = 0 + (fabs(df * dwa) + fabs(ca) * h);
		qv[q] += df * df;
		integ[q] += g2 * h;
		resid[q] += df - drift[q] * h - bdw;
		fv[q] += fabs(df);
		magsum[q] += mag + df * df + fabs(g2) * h + fabs(df) + fabs(drift[q]) * h + fabs(bdw) +
		             fabs(f0[q]);
	}
}

/* One step of size h with the increments s->dw: X += a h + b dW (+ Milstein),
 * the coefficients at s->vars (max(X, 0) for truncated states); then f at
 * the new s->vars and the sums. */
ITOX_VECTOR static void scheme_step(const sim_paths_model *p, scheme *s, size_t B, double h)
{
	size_t np = p->nproc, nn = p->nnoise;
	eval_run(p->coef, B, s->vars, s->cout);
	eval_run(p->cprog, B, s->vars, s->claim);
	for (size_t i = 0; i < np; i++) {
		double *restrict x = s->x + i * B;
		const double *restrict drift = s->cout + i * B;
		/* ((x + a h) + b_1 dW_1) + b_2 dW_2 ..., the first two terms in one pass */
		const double *restrict b0 = s->cout + (np + i * nn) * B, *restrict dw0 = s->dw;
		if (nn == 0) {
			ITOX_INDEPENDENT
			for (size_t q = 0; q < B; q++)
				x[q] += drift[q] * h;
		} else {
			ITOX_INDEPENDENT
			for (size_t q = 0; q < B; q++)
				x[q] = (x[q] + drift[q] * h) + b0[q] * dw0[q];
		}
		for (size_t a = 1; a < nn; a++) {
			const double *restrict b = s->cout + (np + i * nn + a) * B, *restrict dw =
			                                                                    s->dw + a * B;
			ITOX_INDEPENDENT
			for (size_t q = 0; q < B; q++)
				x[q] += b[q] * dw[q];
		}
		if (p->mil_noise[i] >= 0) {
			const double *restrict c = s->cout + (np + np * nn + i) * B;
			const double *restrict dw = s->dw + (size_t)p->mil_noise[i] * B;
			ITOX_INDEPENDENT
			for (size_t q = 0; q < B; q++)
				x[q] += c[q] * (dw[q] * dw[q] - h);
		}
		if (p->truncate[i] != SIM_PATHS_FREE) {
			unsigned char *restrict below = s->below;
			ITOX_INDEPENDENT
			for (size_t q = 0; q < B; q++)
				below[q] |= x[q] < 0;
		}
		if (p->truncate[i] == SIM_PATHS_REFLECT) {
			ITOX_INDEPENDENT
			for (size_t q = 0; q < B; q++)
				x[q] = fabs(x[q]);
		}
	}
	s->t += h;
	scheme_truncate(p, s, B);
	eval_run(p->fprog, B, s->vars, s->fnext);
	if (nn == 1)
		step_stats_one_noise(p, s, B, h);
	else
		step_stats(p, s, B, h);
	double *swap = s->fcur;
	s->fcur = s->fnext;
	s->fnext = swap;
}

/* Run B paths over nsteps fine steps of size dt for all schemes at once:
 * dW = sqrt(dt) L Z with Z independent standard normals. */
ITOX_VECTOR static void block_paths(const sim_paths_model *p, volatile sig_atomic_t *interrupt,
                                    sim_lanes *rng, size_t B, long nsteps, double dt, size_t nschemes,
                                    scheme *schemes)
{
	size_t nn = p->nnoise;
	double *z = xmalloc((nn + 1) * B * sizeof *z);
	double root = sqrt(dt);
	for (long k = 0; k < nsteps; k++) {
		if (interrupt && k % 64 == 0 && *interrupt)
			break; /* the result is dropped: run_blocks reports the interrupt */
		sim_lanes_normals(rng, nn * B, z);
		for (size_t si = 0; si < nschemes; si++) {
			scheme *s = &schemes[si];
			for (size_t a = 0; a < nn; a++) {
				double *restrict dw = s->dw + a * B;
				bool fresh = s->pending ==
				             0; /* the first increment of a step is stored, not added */
				for (size_t c = 0; c <= a; c++) {
					double l = p->chol[a * nn + c] * root;
					const double *restrict zc = z + c * B;
					if (l == 0)
						continue;
					if (fresh) {
						ITOX_INDEPENDENT
						for (size_t q = 0; q < B; q++)
							dw[q] = l * zc[q];
					} else {
						ITOX_INDEPENDENT
						for (size_t q = 0; q < B; q++)
							dw[q] += l * zc[q];
					}
					fresh = false;
				}
				if (fresh)
					memset(dw, 0, B * sizeof *dw);
			}
			if (++s->pending == s->ratio || k == nsteps - 1) {
				scheme_step(p, s, B, (double)s->pending * dt);
				s->pending = 0;
			}
		}
	}
	free(z);
}

/* ------------------------------------------------------------------ the main statistics */

typedef struct job {
	const sim_paths_model *p;
	volatile sig_atomic_t *interrupt; /* read (never written) by the threads */
	long steps;
	double dt;
	size_t nstat;
} job;

static void totals_init(sim_paths_totals *r, size_t nstat)
{
	memset(r, 0, sizeof *r);
	r->ext = xcalloc(nstat, sizeof *r->ext);
	r->fine = xcalloc(nstat, sizeof *r->fine);
	r->d1 = xcalloc(nstat, sizeof *r->d1);
	r->d2 = xcalloc(nstat, sizeof *r->d2);
}

static void totals_merge(sim_paths_totals *into, const sim_paths_totals *b, size_t nstat)
{
	into->bad += b->bad;
	into->below += b->below;
	for (size_t i = 0; i < nstat; i++) {
		sim_stat_merge(&into->ext[i], &b->ext[i]);
		sim_stat_merge(&into->fine[i], &b->fine[i]);
		sim_stat_merge(&into->d1[i], &b->d1[i]);
		sim_stat_merge(&into->d2[i], &b->d2[i]);
	}
	sim_stat_merge(&into->qv, &b->qv);
	sim_stat_merge(&into->integ, &b->integ);
	sim_stat_merge(&into->mag, &b->mag);
}

void sim_paths_totals_free(sim_paths_totals *r)
{
	free(r->ext);
	free(r->fine);
	free(r->d1);
	free(r->d2);
}

static void path_values(const sim_paths_model *p, const scheme *s, size_t B, size_t q, double *v)
{
	v[SIM_PATHS_QV] = s->qv[q] - s->integ[q];
	v[SIM_PATHS_RESID] = s->resid[q];
	v[SIM_PATHS_TERMINAL] = s->fcur[q];
	for (size_t a = 0; a < p->nnoise; a++)
		v[SIM_PATHS_COV + a] = s->cov[a * B + q];
}

/* The grids of the main run: N, N/2 and N/4 steps (fewer when N < 4). */
size_t sim_paths_grids(long steps)
{
	return steps >= 4 ? 3 : steps >= 2 ? 2 : 1;
}

static void main_block(const job *jb, sim_lanes *rng, size_t B, sim_paths_totals *r)
{
	const sim_paths_model *p = jb->p;
	size_t ngrids = sim_paths_grids(jb->steps), nstat = jb->nstat;
	scheme s[3];
	for (size_t i = 0; i < ngrids; i++)
		scheme_init(p, &s[i], B, 1L << i);
	block_paths(p, jb->interrupt, rng, B, jb->steps, jb->dt, ngrids, s);
	/* per path: S(h), S(2h), S(4h), then R(h), D1, D2 */
	double *v = xcalloc(6 * nstat, sizeof *v);
	double *fine = v, *half = v + nstat, *quarter = v + 2 * nstat;
	double *ext = v + 3 * nstat, *d1 = v + 4 * nstat, *d2 = v + 5 * nstat;
	for (size_t q = 0; q < B; q++) {
		bool below = false;
		for (size_t g = 0; g < ngrids; g++) {
			path_values(p, &s[g], B, q, v + g * nstat);
			below = below || s[g].below[q];
		}
		bool good = isfinite(s[0].qv[q] + s[0].integ[q] + s[0].mag[q]);
		for (size_t i = 0; i < nstat; i++) {
			double coarse = ngrids >= 2 ? half[i] : fine[i];
			ext[i] = 2 * fine[i] - coarse;
			d1[i] = fine[i] - coarse;
			d2[i] = ngrids >= 3 ? ext[i] - (2 * half[i] - quarter[i]) : 0;
			good = good && isfinite(ext[i]) && isfinite(d1[i]) && isfinite(d2[i]);
		}
		r->below += below;
		if (!good) {
			r->bad++;
			continue;
		}
		for (size_t i = 0; i < nstat; i++) {
			sim_stat_add(&r->ext[i], ext[i]);
			sim_stat_add(&r->fine[i], fine[i]);
			sim_stat_add(&r->d1[i], d1[i]);
			sim_stat_add(&r->d2[i], d2[i]);
		}
		sim_stat_add(&r->qv, s[0].qv[q]);
		sim_stat_add(&r->integ, s[0].integ[q]);
		sim_stat_add(&r->mag, s[0].mag[q]);
	}
	free(v);
	for (size_t i = 0; i < ngrids; i++)
		scheme_free(&s[i]);
}

/* The convergence table: one set of paths on 10, 100, 1000, 10000 steps. */
static void conv_block(const job *jb, sim_lanes *rng, size_t B, sim_paths_conv *r)
{
	const sim_paths_model *p = jb->p;
	long finest = sim_paths_conv_steps[SIM_PATHS_NCONV - 1];
	scheme s[SIM_PATHS_NCONV];
	for (size_t i = 0; i < SIM_PATHS_NCONV; i++)
		scheme_init(p, &s[i], B, finest / sim_paths_conv_steps[i]);
	block_paths(p, jb->interrupt, rng, B, finest, p->horizon / (double)finest, SIM_PATHS_NCONV, s);
	for (size_t q = 0; q < B; q++) {
		bool good = true;
		for (size_t i = 0; i < SIM_PATHS_NCONV; i++)
			good = good && isfinite(s[i].qv[q] + s[i].integ[q] + s[i].fv[q]);
		if (!good) {
			r->bad++;
			continue;
		}
		for (size_t i = 0; i < SIM_PATHS_NCONV; i++) {
			sim_stat_add(&r->qv[i], s[i].qv[q]);
			sim_stat_add(&r->integ[i], s[i].integ[q]);
			sim_stat_add(&r->gap[i], s[i].qv[q] - s[i].integ[q]);
			sim_stat_add(&r->fv[i], s[i].fv[q]);
		}
	}
	for (size_t i = 0; i < SIM_PATHS_NCONV; i++)
		scheme_free(&s[i]);
}

static void conv_merge(sim_paths_conv *into, const sim_paths_conv *b)
{
	into->bad += b->bad;
	for (size_t i = 0; i < SIM_PATHS_NCONV; i++) {
		sim_stat_merge(&into->qv[i], &b->qv[i]);
		sim_stat_merge(&into->integ[i], &b->integ[i]);
		sim_stat_merge(&into->gap[i], &b->gap[i]);
		sim_stat_merge(&into->fv[i], &b->fv[i]);
	}
}

/* Whether this is the thread that called run_blocks (the progress callback
 * writes to the session's stream, so only that thread calls it). */
static bool calling_thread(void)
{
#ifdef _OPENMP
	return omp_get_thread_num() == 0;
#else
	return true;
#endif
}

/* Run npaths in blocks; block j uses the stream of the seed jumped j times.
 * Returns false when interrupted. */
static bool run_blocks(expr_ctx *ctx, const job *jb, size_t npaths, bool conv, sim_paths_totals *total,
                       sim_paths_conv *conv_total)
{
	size_t nblocks = (npaths + SIM_PATHS_BLOCK - 1) / SIM_PATHS_BLOCK;
	sim_rng stream;
	sim_rng_seed(&stream, jb->p->seed);
	sim_lanes rngs[SIM_PATHS_ROUND];
	sim_paths_totals results[SIM_PATHS_ROUND];
	sim_paths_conv *convs = conv ? xcalloc(SIM_PATHS_ROUND, sizeof *convs) : NULL;
	bool interrupted = false;
	size_t done = 0; /* blocks finished, for the progress report */
	for (size_t first = 0; first < nblocks && !interrupted; first += SIM_PATHS_ROUND) {
		size_t count = nblocks - first < SIM_PATHS_ROUND ? nblocks - first : SIM_PATHS_ROUND;
		for (size_t i = 0; i < count; i++) {
			sim_lanes_take(&rngs[i], &stream);
			if (conv)
				memset(&convs[i], 0, sizeof convs[i]);
			else
				totals_init(&results[i], jb->nstat);
		}
#ifdef _OPENMP
#pragma omp parallel for schedule(dynamic, 1)
#endif
		for (long i = 0; i < (long)count; i++) {
			size_t block = first + (size_t)i;
			size_t B = npaths - block * SIM_PATHS_BLOCK < SIM_PATHS_BLOCK
			                   ? npaths - block * SIM_PATHS_BLOCK
			                   : SIM_PATHS_BLOCK;
			if (conv)
				conv_block(jb, &rngs[i], B, &convs[i]);
			else
				main_block(jb, &rngs[i], B, &results[i]);
			size_t finished;
#ifdef _OPENMP
#pragma omp atomic capture
#endif
			finished = ++done;
			if (jb->p->progress && calling_thread() && !(jb->interrupt && *jb->interrupt))
				jb->p->progress(jb->p->progress_data, (double)finished / (double)nblocks,
				                jb->steps);
		}
		for (size_t i = 0; i < count; i++) {
			if (conv) {
				conv_merge(conv_total, &convs[i]);
			} else {
				totals_merge(total, &results[i], jb->nstat);
				sim_paths_totals_free(&results[i]);
			}
		}
		interrupted = expr_poll_interrupt(ctx);
	}
	free(convs);
	return !interrupted;
}

bool sim_paths_run(expr_ctx *ctx, const sim_paths_model *model, long steps, size_t npaths,
                   sim_paths_totals *total)
{
	job jb = {.p = model,
	          .interrupt = expr_ctx_limits(ctx)->interrupt,
	          .steps = steps,
	          .dt = model->horizon / (double)steps,
	          .nstat = SIM_PATHS_COV + model->nnoise};
	totals_init(total, jb.nstat);
	return run_blocks(ctx, &jb, npaths, false, total, NULL);
}

bool sim_paths_convergence(expr_ctx *ctx, const sim_paths_model *model, size_t npaths, sim_paths_conv *total)
{
	job jb = {.p = model, .interrupt = expr_ctx_limits(ctx)->interrupt};
	memset(total, 0, sizeof *total);
	return run_blocks(ctx, &jb, npaths, true, NULL, total);
}
