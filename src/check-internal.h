/* check-internal.h - shared by the files of `check` (check.c, check-plan.c,
 * check-fd.c); not part of the library's interface. */
#ifndef ITOX_CHECK_INTERNAL_H
#define ITOX_CHECK_INTERNAL_H

#include "crosscheck.h"
#include "eval.h"
#include "sim-paths.h"

/* What a check runs on: the symbols of f and of the claim, the point, the
 * dynamics under the measure and the compiled programs. */
typedef struct check_plan {
	expr_ctx *ctx;
	model *m;
	const check_input *in;
	/* program variables: processes (states and noises), then t, then parameters */
	size_t nproc, nparam, nvars;
	const expr **vars;
	double *point;           /* nvars values at the start */
	unsigned char *truncate; /* nproc: SIM_PATHS_FREE, _TRUNCATE or _REFLECT */
	ito_diff *dyn;           /* nproc: Itô dynamics under the measure */
	size_t nnoise;           /* the noises that play a part, in model order */
	size_t *noise;           /* model index of each */
	double *rho;             /* nnoise x nnoise */
	double *chol;            /* its lower Cholesky factor */
	bool milstein;           /* the scheme used (Milstein asked for and applicable) */
	long *mil_noise;         /* nproc: the one noise driving the state, or -1 */
	eval_prog *coef;         /* drift_i, then b_ia (i major), then Milstein 1/2 b b_x */
	eval_prog *fprog;        /* f */
	eval_prog *cprog;        /* the claimed drift and b_a, at the truncated point like the SDE's */
	size_t ncoef, nclaim;
	char *note;            /* a remark for the report, or NULL */
	bool unrepresentable;  /* f or a tested coefficient at the point is beyond the range of doubles */
	double scale;          /* the statistics are of f / scale: a power of 2, 1 unless f is huge or tiny */
	sim_paths_model paths; /* the plan as the path simulation reads it */
} check_plan;

/* Fill p (ctx, m and in set) for a check; NULL or the message why it cannot run.
 * Free p with check_plan_free in both cases. */
char *check_plan_make(check_plan *p);
void check_plan_free(check_plan *p);

/* The relative tolerance of a finite difference (plus its rounding error). */
#define CHECK_FD_TOLERANCE 1e-5

/* e with the concrete forms of `check ... where` put in for the generic
 * functions and their partials (e itself when there are none; NULL on failure). */
const expr *check_plan_concrete(check_plan *p, const expr *e);

/* Whether f and the tested coefficients at the point are within the range
 * of doubles (no underflow to 0, no overflow); *size: max(|f|, |a| T, |b| sqrt T). */
bool check_fd_point(check_plan *p, double *size);

/* The finite-difference rows of the partials Itô's formula uses (*rows owned by the caller). */
size_t check_fd_table(check_plan *p, check_fd_row **rows);

#endif
