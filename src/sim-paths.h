/* sim-paths.h - paths of a system of SDEs over blocks, with the statistics
 * of a claimed differential df = a dt + sum_k b_k dW_k along them (the
 * simulation half of `check`; the mathematics is in sim-paths.c).
 *
 * The caller compiles the coefficients (eval.h) and fills a sim_paths_model;
 * the result does not depend on the number of threads.
 */
#ifndef ITOX_SIM_PATHS_H
#define ITOX_SIM_PATHS_H

#include <stdbool.h>
#include <stddef.h>

#include "eval.h"
#include "expr.h"
#include "sim.h"

/* What keeps a state in its domain: nothing, full truncation at 0 (x >= 0),
 * reflection at 0 (x > 0); see sim-paths.c. */
enum { SIM_PATHS_FREE, SIM_PATHS_TRUNCATE, SIM_PATHS_REFLECT };

/* The system as programs over the variables: the processes (states and
 * noises) 0 .. nproc-1, then t (at nproc), then the parameters. */
typedef struct sim_paths_model {
	size_t nproc;           /* processes */
	size_t nvars;           /* program variables: nproc + 1 + parameters */
	size_t nnoise;          /* the noises that play a part */
	const double *point;    /* nvars values at the start */
	const unsigned char *truncate; /* nproc: SIM_PATHS_FREE, _TRUNCATE or _REFLECT at 0 */
	const double *rho;      /* nnoise x nnoise correlations */
	const double *chol;     /* their lower Cholesky factor */
	const long *mil_noise;  /* nproc: the one noise of the Milstein term, or -1 */
	const eval_prog *coef;  /* drift_i, then b_ia (i major), then Milstein 1/2 b b_x: ncoef outputs */
	const eval_prog *fprog; /* f */
	const eval_prog *cprog; /* the claimed drift and b_a, at the truncated point: nclaim outputs */
	size_t ncoef, nclaim;   /* outputs of coef and cprog */
	double horizon;         /* T */
	unsigned long seed;     /* block j uses the seed's stream jumped j SIM_LANES times */
	/* called by the calling thread after each block it finishes, with the share
	 * of the run done (0..1); may be NULL */
	void (*progress)(void *data, double done, long steps);
	void *progress_data;
} sim_paths_model;

/* The per-path statistics, index SIM_PATHS_COV + a for noise a. */
enum { SIM_PATHS_QV, SIM_PATHS_RESID, SIM_PATHS_TERMINAL, SIM_PATHS_COV };

/* Totals of the main run over all paths. */
typedef struct sim_paths_totals {
	long bad;             /* paths with NaN or Inf in a statistic, left out */
	long below;           /* paths on which a truncated or reflected state went below 0 */
	sim_stat *ext, *fine; /* nstat each: extrapolated R(h) = 2 S(h) - S(2h) and fine-grid S(h) */
	sim_stat *d1, *d2;    /* nstat each: S(h) - S(2h) and R(h) - R(2h) (0 with fewer than 3 grids) */
	sim_stat qv, integ;   /* realised QV and the integral of g^2 dt, fine grid */
	sim_stat mag;         /* the size of the terms summed (the rounding floor of se) */
} sim_paths_totals;

/* The convergence table: one set of paths on each of these numbers of steps. */
enum { SIM_PATHS_NCONV = 4 };
extern const long sim_paths_conv_steps[SIM_PATHS_NCONV];
typedef struct sim_paths_conv {
	long bad; /* paths with NaN or Inf, left out */
	sim_stat qv[SIM_PATHS_NCONV], integ[SIM_PATHS_NCONV], gap[SIM_PATHS_NCONV], fv[SIM_PATHS_NCONV];
} sim_paths_conv;

/* The grids of a main run of `steps` steps: 3 (N, N/2, N/4), 2 or 1. */
size_t sim_paths_grids(long steps);
/* npaths paths of `steps` steps over [t0, t0 + T] into total (nstat =
 * SIM_PATHS_COV + nnoise statistics; free with sim_paths_totals_free).
 * Returns false when interrupted (the context says why). */
bool sim_paths_run(expr_ctx *ctx, const sim_paths_model *model, long steps, size_t npaths,
                   sim_paths_totals *total);
void sim_paths_totals_free(sim_paths_totals *total);
/* npaths paths on every grid of sim_paths_conv_steps into total (zeroed first). */
bool sim_paths_convergence(expr_ctx *ctx, const sim_paths_model *model, size_t npaths, sim_paths_conv *total);

#endif
