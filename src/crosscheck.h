/* crosscheck.h - the numerical cross-check of a differential (the `check` statement).
 *
 * Given an expression f of the model's states, a differential for it (the
 * engine's own, or one a user derived by hand) and a point, it confirms the
 * symbols with numbers:
 *   1. finite differences: every partial derivative the engine used against a
 *      central difference with a step chosen for the scale;
 *   2. simulation: paths of the states from the point; along each path the
 *      realised quadratic variation sum (df)^2 against the integral of the
 *      squared diffusion, and f(T) - f(0) - integral of the drift against 0,
 *      each with a standard error and a z-score;
 *   3. a verdict with the tolerance used.
 * The result is data (check_result); the writers of the output formats
 * (writer.h) write it.  check.c says where each part is computed.
 */
#ifndef ITOX_CROSSCHECK_H
#define ITOX_CROSSCHECK_H

#include <stdbool.h>
#include <stddef.h>

#include "expr.h"
#include "ito.h"
#include "model.h"

/* A concrete form for a generic function: func(formals) = body.  The check
 * evaluates the function and its partials (f_x, f_xy, ... as the engine's
 * differential has them) from it. */
typedef struct check_concrete {
	const expr *func;           /* the generic function's symbol */
	size_t nargs;               /* its arity */
	const expr *const *formals; /* nargs distinct symbols */
	const expr *body;           /* an expression in the formals (and the model's names) */
} check_concrete;

typedef struct check_input {
	model *m;
	const model_measure *q; /* NULL: the model's own measure */
	const expr *f;          /* the expression whose differential is checked */
	const ito_diff *d;      /* the differential to test (drift and one coefficient per noise) */
	bool hand_derived;      /* d came from the user: skip finite differences */
	size_t nconcrete;       /* concrete forms for generic functions (`where`) */
	const check_concrete *concrete;
	/* the point: values for every parameter and state that f and the model use */
	size_t nvalues;
	const expr **symbols;
	const double *values;
	/* simulation settings */
	double horizon; /* T */
	long steps, paths;
	unsigned long seed;
	bool milstein; /* otherwise Euler-Maruyama */
	bool verbose;  /* add the convergence table */
	long max_work; /* limit on steps*paths; 0 for the default */
	/* called now and then with the share of the simulation done (0..1) on a grid of
	 * `steps` steps (a refined grid starts again from 0); may be NULL */
	void (*progress)(void *data, double done, long steps);
	void *progress_data;
} check_input;

/* One partial derivative of f against its central difference. */
typedef struct check_fd_row {
	const expr *first;  /* the variable of the derivative */
	const expr *second; /* the second variable of a second derivative; NULL for a first one */
	double engine;      /* the engine's partial at the point (NaN when it cannot be evaluated) */
	double difference;  /* the central difference */
	double error;       /* |engine - difference| / max(1, |engine|) */
	double tolerance;   /* the bound on error: the relative tolerance plus the rounding */
	bool ok;            /* error within tolerance */
	bool formed;        /* both values could be formed at the point (finite, in the domain) */
	char engine_text[32], difference_text[32]; /* the values to 10 digits (also beyond double range) */
} check_fd_row;

/* How a heavy statistic stands without the paths that dominate it (name, the
 * words of the text table, the JSON value): not judged (not heavy, or outside
 * its tolerance untrimmed); both means within the trimmed tolerance; still
 * dominated (after 7 paths set aside from R(h), D1 or D2, with too few paths
 * to trim, or with a rest lost to rounding); a mean outside the trimmed
 * tolerance; within it only by the bias allowance. */
#define CHECK_TRIM_LIST(X)                                                    \
	X(NONE, "", "none")                                                   \
	X(WITHIN, "within", "within")                                         \
	X(DOMINATED, "still dominated by one path", "dominated")              \
	X(OUTSIDE, "outside", "outside")                                      \
	X(BY_BIAS, "within only by the bias allowance", "within_by_bias")
#define CHECK_TRIM_ENUM(name, text, json) CHECK_TRIM_##name,
typedef enum check_trim { CHECK_TRIM_LIST(CHECK_TRIM_ENUM) CHECK_TRIM_COUNT } check_trim;
#undef CHECK_TRIM_ENUM

/* The mean of a statistic that is zero when the claim is right.  It is
 * judged by a tolerance made of three parts: z_tolerance standard errors
 * (of the mean and of the bias estimate), the discretisation bias estimated
 * from the grids, and the allowance for floating-point rounding over the
 * steps; so a statistic without randomness (se = 0) is judged by the
 * last two alone, never by a z-score. */
typedef struct check_zstat {
	double n;         /* paths in the mean */
	double mean;      /* mean of the extrapolated R(h) = 2 S(h) - S(2h) (S(h) alone for one step) */
	double se;        /* its standard error */
	double z;         /* mean / se; NaN when se = 0 */
	double fine;      /* mean on the fine grid alone */
	double bias;      /* the estimated bias of R(h): |mean D| of the grid difference D1 = S(h) - S(2h)
	                   * or D2 = R(h) - R(2h), whichever has the larger |mean D| + z_tol se(D) */
	double bias_se;   /* se(D) */
	double rounding;  /* allowance for rounding: 8 eps steps times the mean size of the terms */
	double tolerance; /* z_tol sqrt(se^2 + bias_se^2) + bias + rounding */
	bool ok;          /* n > 1 and |mean| <= tolerance */
	bool grid_decides; /* ok only by the bias allowance: |mean| is over z_tol se + rounding and
	                    * over half the bias, so the grid is too coarse to tell a wrong drift
	                    * from the discretisation */
	double top_share;  /* the largest share of the sum of squared deviations one path holds, in
	                    * R(h) or in the grid differences */
	bool heavy;        /* top_share is too large for the standard errors to be trusted */
	bool off;          /* evidence against the differential: not ok, and when heavy, also off
	                    * by twice the tolerance without the path farthest from the mean */
	/* Only for a heavy statistic within its tolerance: the same test on the trimmed statistics
	 * (R(h), D1 and D2 each without their farthest paths until none is dominated by one path);
	 * the untrimmed mean must be within the trimmed tolerance too. */
	int trimmed;              /* paths set aside from R(h) */
	int trimmed_grid;         /* the most set aside from D1 or D2 */
	double trimmed_mean;      /* mean of R(h) without them */
	double trimmed_tolerance; /* its tolerance, from the trimmed se, bias and bias se */
	check_trim trimmed_is;    /* how the trimmed statistic stands; CHECK_TRIM_WITHIN (not dominated,
	                           * within its tolerance not only by the bias allowance) keeps the
	                           * heavy tails from making the verdict undecided */
} check_zstat;

/* A noise that plays a part, in model order. */
typedef struct check_noise {
	const expr *name;        /* its symbol; under a measure Q, its Q Brownian motion */
	const expr *coefficient; /* the tested differential's coefficient of its dW; NULL if it has none */
	check_zstat covariation; /* sum df dW - sum (rho b) dt */
} check_noise;

/* A row of the convergence table: the same paths on a grid of `steps` steps. */
typedef struct check_conv_row {
	long steps;             /* steps of the grid */
	double qv;              /* mean realised quadratic variation */
	double qv_se;           /* its standard error */
	double predicted;       /* mean integral of the squared diffusion */
	double gap_sd;          /* standard deviation of QV - I across paths */
	double first_variation; /* mean sum |df| */
} check_conv_row;

/* The verdicts: the numbers agree with the differential, they are evidence
 * against it, or the experiment could not judge it. */
typedef enum check_verdict { CHECK_CONSISTENT, CHECK_INCONSISTENT, CHECK_UNDECIDED } check_verdict;

/* Why a check is inconsistent (the first five) or undecided (the rest). */
typedef enum check_reason_kind {
	CHECK_REASON_FD,             /* a finite difference disagrees (index: the row) */
	CHECK_REASON_QV,             /* the quadratic variation disagrees with the diffusion */
	CHECK_REASON_RESIDUAL,       /* the martingale residual is not zero (the drift) */
	CHECK_REASON_COVARIATION,    /* a covariation disagrees with its coefficient (index: the noise) */
	CHECK_REASON_BAD_PATHS,      /* undecided: paths left the domain or overflowed (NaN or Inf) */
	CHECK_REASON_FEW_PATHS,      /* undecided: too few usable paths */
	CHECK_REASON_FEW_STEPS,      /* undecided: under 4 steps, no estimate of the discretisation bias */
	CHECK_REASON_FD_SCALE,       /* undecided: a finite difference cannot be formed (index: the row) */
	CHECK_REASON_COARSE_GRID,    /* undecided: only the bias allowance covers a statistic (index:
	                              * 0 qv, 1 residual, 2 + a the covariation with noise a) */
	CHECK_REASON_UNREPRESENTABLE, /* undecided: f or a coefficient is not representable in double
	                               * precision at the point (underflow or overflow) */
	CHECK_REASON_HEAVY_TAILS      /* undecided: one path holds much of a statistic's spread
	                               * (index as for COARSE_GRID) */
} check_reason_kind;

/* Whether a reason makes the verdict undecided rather than inconsistent. */
#define CHECK_REASON_UNDECIDES(kind) ((kind) >= CHECK_REASON_BAD_PATHS)

typedef struct check_reason {
	check_reason_kind kind; /* what disagrees, or why the experiment cannot judge */
	size_t index;           /* the row of fd or of noises it concerns; 0 otherwise */
} check_reason;

/* What was checked and how. */
typedef struct check_setup {
	const expr *f;            /* the expression */
	size_t nvalues;           /* the point as given */
	const expr **symbols;     /* nvalues symbols */
	double *values;           /* nvalues values */
	bool milstein;            /* the scheme used: Milstein, else Euler-Maruyama */
	double horizon;           /* T */
	long steps, paths;        /* steps of the fine grid, paths asked for */
	long steps_asked;         /* steps asked for; steps is larger when the grid was refined */
	unsigned long seed;       /* the seed of the streams */
	bool hand_derived;        /* the differential was the user's: no finite differences */
	size_t nconcrete;         /* the concrete forms used (`where`) */
	check_concrete *concrete; /* nconcrete, each with its own copy of the formals */
	const expr *drift;        /* the tested differential's drift (its dW terms: check_noise) */
	char *note;               /* a remark on the plan (Milstein not applicable), or NULL */
	double z_tolerance;       /* a statistic is consistent when |z| is below this */
	double fd_tolerance;      /* the relative tolerance of the finite differences */
} check_setup;

/* The simulation's statistics. */
typedef struct check_simulation {
	check_zstat qv;       /* mean(QV - I) */
	double qv_realised;   /* mean realised QV on the fine grid */
	double qv_predicted;  /* mean integral of g^2 dt on the fine grid */
	check_zstat residual; /* f(T) - f(0) - sum drift dt - sum b dW */
	check_zstat terminal; /* f(T): its mean and se (not a test) */
	long coarse_steps;    /* the coarse grid of the extrapolation; 0 for one step (none) */
	long paths_used;      /* paths in the statistics */
	long bad_paths;       /* paths with NaN or Inf, left out */
	long truncated_paths; /* paths on which full truncation acted */
	size_t grids;         /* grids of the bias estimate: 3 (N, N/2, N/4), 2 or 1 */
	double scale;         /* the statistics are of f / scale (a power of 2; 1 unless f is huge or tiny) */
	long min_paths;       /* usable paths needed for a verdict */
} check_simulation;

typedef struct check_result {
	check_verdict verdict; /* consistent: no reasons; undecided: a reason that undecides and no
	                        * finite difference off */
	bool consistent;       /* verdict == CHECK_CONSISTENT */
	bool limit_hit;        /* steps*paths over the limit, or interrupted: nothing was reported */
	char *error;       /* set when the check could not run (a missing value, ...); then nothing else is */
	check_setup setup; /* what was checked */
	size_t nfd;        /* finite-difference rows (none when hand derived) */
	check_fd_row *fd;  /* nfd rows */
	size_t nnoise;     /* the noises that play a part */
	check_noise *noises;   /* nnoise, in model order */
	check_simulation sim;  /* the statistics of the paths */
	size_t conv_paths;     /* paths of the convergence table (verbose); 0 for no table */
	long conv_bad;         /* of them, left out of the table (NaN or Inf) */
	size_t nconv;          /* rows of the table */
	check_conv_row *conv;  /* nconv rows, coarsest first */
	size_t nreasons;       /* why inconsistent or undecided */
	check_reason *reasons; /* nreasons, in the order found */
} check_result;

void check_run(expr_ctx *ctx, const check_input *in, check_result *out);
void check_result_free(check_result *result);

#endif
