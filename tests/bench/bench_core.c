/* bench_core.c - symbolic scaling of the itox engine (a benchmark, not a test:
 * it measures and prints, it never asserts a timing).
 *
 * Cases (tests/bench/RESULTS.md has the measured table):
 *   a  expansion of a product of linear forms prod_i (a_i*x + b_i*y + c_i) and
 *      its partial derivatives d/dx, d/dy;
 *   b  Itô's formula for a generic f(t, X_1..X_n), dX_i = mu_i dt + sig_i dW_i,
 *      corr(W_i, W_j) = rho_i_j (all pairs, symbolic):
 *        df = (f_t + sum_i mu_i f_i + 1/2 sum_ij rho_ij sig_i sig_j f_ij) dt
 *             + sum_i sig_i f_i dW_i;
 *   c  the same formula for f = exp(a_1 X_1 + ... + a_n X_n) X_1 ... X_n under
 *      mean-reverting states dX_i = kap_i (th_i - X_i) dt + sig_i dW_i.
 *
 * Every measurement runs in a child process (so a runaway case is stopped by
 * a timeout, whatever part of the engine it is in) and every repetition uses
 * a fresh context, so memoized derivatives of an earlier repetition never
 * help a later one.  Two times are given for b and c:
 *   engine  ito_d() alone, on a model built with the model.h API;
 *   query   the statement `d EXPR` through session_run() (parse, Itô's
 *           formula, printing), after the declarations were run untimed.
 *
 * Usage: bench_core [--reps N] [--budget S] [--timeout S] [--max-n N] [--n N]
 *                   [--only a|b|c] [--tsv]
 *        bench_core --script b|c N   the itox source of a case (setup + query)
 *        bench_core --drift b|c N    the engine's result as one JSON line
 */
#define _POSIX_C_SOURCE 200809L

#include <errno.h>
#include <poll.h>
#include <signal.h>
#include <stdbool.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/wait.h>
#include <time.h>
#include <unistd.h>

#include "diff.h"
#include "expr.h"
#include "ito.h"
#include "model.h"
#include "print.h"
#include "bench_clock.h"
#include "session.h"
#include "xalloc.h"

#define MAX_REPS 15

typedef struct bench_options {
	int reps;       /* repetitions of one measurement (median reported) */
	double budget;  /* stop repeating once this many seconds were spent */
	double timeout; /* a measurement running longer is killed */
	int max_n;
	int only_n; /* 0, or the one n to run (for profiling) */
	char only;  /* 0, 'a', 'b' or 'c' */
	bool tsv;
} bench_options;

/* What a child process reports back through a pipe (no pointers). */
typedef struct measurement {
	int status; /* 0 ok, else SESSION_LIMIT / SESSION_INPUT / other */
	int reps;
	double engine, query; /* medians in seconds; negative when not measured */
	size_t size, nodes, printed;
	char note[96];
} measurement;

typedef struct bench_case {
	const char *name;
	char kind; /* 'a' expansion, 'd' derivatives, 'b', 'c' Itô */
	char form; /* for a: 'n' numeric, 's' shared symbols, 'd' distinct */
	int n;
} bench_case;

/* ------------------------------------------------------------ case a */

/* Factor i of the product: numeric  (i+1)*x + (2i+3)*y + (i mod 5 + 1);
 * shared  a*x + b*y + c + (i+1);  distinct  a_i*x + b_i*y + c_i. */
static const expr *linear_form(expr_ctx *ctx, char form, int i)
{
	const expr *x = expr_sym(ctx, "x"), *y = expr_sym(ctx, "y");
	char name[32];
	switch (form) {
	case 'n':
		return expr_add_n(ctx, 3,
		                  (const expr *[]){expr_mul(ctx, expr_int(ctx, i + 1), x),
		                                   expr_mul(ctx, expr_int(ctx, 2 * i + 3), y),
		                                   expr_int(ctx, i % 5 + 1)});
	case 's':
		return expr_add_n(ctx, 4,
		                  (const expr *[]){expr_mul(ctx, expr_sym(ctx, "a"), x),
		                                   expr_mul(ctx, expr_sym(ctx, "b"), y), expr_sym(ctx, "c"),
		                                   expr_int(ctx, i + 1)});
	default:
		snprintf(name, sizeof name, "a%d", i + 1);
		const expr *a = expr_sym(ctx, name);
		snprintf(name, sizeof name, "b%d", i + 1);
		const expr *b = expr_sym(ctx, name);
		snprintf(name, sizeof name, "c%d", i + 1);
		return expr_add_n(
		        ctx, 3,
		        (const expr *[]){expr_mul(ctx, a, x), expr_mul(ctx, b, y), expr_sym(ctx, name)});
	}
}

/* The expanded product, one factor at a time (each expr_mul expands). */
static const expr *linear_product(expr_ctx *ctx, char form, int n)
{
	const expr *product = expr_int(ctx, 1);
	for (int i = 0; i < n && product; i++)
		product = expr_mul(ctx, product, linear_form(ctx, form, i));
	return product;
}

/* The same product as itox source text. */
static void linear_source(xbuf *buf, char form, int n)
{
	if (form == 'n')
		xbuf_put(buf, "param x, y\n");
	else if (form == 's')
		xbuf_put(buf, "param x, y, a, b, c\n");
	else {
		xbuf_put(buf, "param x, y");
		for (int i = 1; i <= n; i++)
			xbuf_printf(buf, ", a%d, b%d, c%d", i, i, i);
		xbuf_put(buf, "\n");
	}
	for (int i = 0; i < n; i++) {
		if (i)
			xbuf_put(buf, "*");
		if (form == 'n')
			xbuf_printf(buf, "(%d*x + %d*y + %d)", i + 1, 2 * i + 3, i % 5 + 1);
		else if (form == 's')
			xbuf_printf(buf, "(a*x + b*y + c + %d)", i + 1);
		else
			xbuf_printf(buf, "(a%d*x + b%d*y + c%d)", i + 1, i + 1, i + 1);
	}
	xbuf_put(buf, "\n");
}

/* ------------------------------------------------------------ cases b, c */

static const expr *named(expr_ctx *ctx, const char *format, int i, int j)
{
	char name[48];
	snprintf(name, sizeof name, format, i, j);
	return expr_sym(ctx, name);
}

static void add_param(model *m, const expr *sym)
{
	model_add(m, expr_sym_name(sym), MODEL_PARAM, sym);
}

/* The model of case b or c with n states, built with the model.h API the way
 * the session builds it from the source of itox_source(). */
static const expr *build_model(model *m, char kind, int n)
{
	expr_ctx *ctx = m->ctx;
	for (int i = 1; i <= n; i++) {
		const expr *w = named(ctx, "W%d", i, 0);
		model_add(m, expr_sym_name(w), MODEL_NOISE, w);
		expr_sym_set_rank(ctx, w, PRN_RANK_NOISE);
		model_add_noise(m, w);
	}
	for (int i = 1; i <= n; i++)
		for (int j = i + 1; j <= n; j++) {
			const expr *rho = named(ctx, "rho_%d_%d", i, j);
			add_param(m, rho);
			model_set_corr(m, (size_t)i - 1, (size_t)j - 1, rho);
		}
	const expr *args[EXPR_MAX_FUNC_ARGS + 1];
	const char *arg_names[EXPR_MAX_FUNC_ARGS + 1];
	const expr *sum = expr_int(ctx, 0), *product = expr_int(ctx, 1);
	for (int i = 1; i <= n; i++) {
		const expr *x = named(ctx, "X%d", i, 0), *sig = named(ctx, "sig%d", i, 0);
		model_add(m, expr_sym_name(x), MODEL_STATE, x);
		expr_sym_set_rank(ctx, x, PRN_RANK_STATE);
		add_param(m, sig);
		model_sde *sde = model_add_sde(m, x);
		sde->diffusion[i - 1] = sig;
		if (kind == 'b') {
			const expr *mu = named(ctx, "mu%d", i, 0);
			add_param(m, mu);
			sde->drift = mu;
			if (i <= EXPR_MAX_FUNC_ARGS - 1) {
				args[i] = x;
				arg_names[i] = expr_sym_name(x);
			}
		} else {
			const expr *kap = named(ctx, "kap%d", i, 0), *th = named(ctx, "th%d", i, 0);
			const expr *a = named(ctx, "a%d", i, 0);
			add_param(m, kap);
			add_param(m, th);
			add_param(m, a);
			sde->drift = expr_mul(ctx, kap, expr_sub(ctx, th, x));
			sum = expr_add(ctx, sum, expr_mul(ctx, a, x));
			product = expr_mul(ctx, product, x);
		}
	}
	if (kind == 'c')
		return expr_mul(ctx, expr_fun(ctx, EXPR_F_EXP, sum), product);
	const expr *f = expr_sym(ctx, "f");
	args[0] = m->time;
	arg_names[0] = "t";
	if (!expr_func_declare(ctx, f, (size_t)n + 1, arg_names))
		return NULL;
	model_add(m, "f", MODEL_FUNC, f);
	return expr_fapp(ctx, f, NULL, args);
}

/* The declarations of case b or c (setup) and the query, as itox source. */
static void itox_source(xbuf *setup, xbuf *query, char kind, int n)
{
	for (int i = 1; i <= n; i++)
		if (kind == 'b')
			xbuf_printf(setup, "param mu%d, sig%d\n", i, i);
		else
			xbuf_printf(setup, "param kap%d, th%d, sig%d, a%d\n", i, i, i, i);
	for (int i = 1; i <= n; i++)
		for (int j = i + 1; j <= n; j++)
			xbuf_printf(setup, "param rho_%d_%d in [-1, 1]\n", i, j);
	xbuf_put(setup, "noise ");
	for (int i = 1; i <= n; i++)
		xbuf_printf(setup, "%sW%d", i > 1 ? ", " : "", i);
	xbuf_put(setup, "\n");
	for (int i = 1; i <= n; i++)
		for (int j = i + 1; j <= n; j++)
			xbuf_printf(setup, "corr(W%d, W%d) = rho_%d_%d\n", i, j, i, j);
	if (kind == 'b') {
		xbuf_put(setup, "func f(t");
		for (int i = 1; i <= n; i++)
			xbuf_printf(setup, ", X%d", i);
		xbuf_put(setup, ")\n");
	}
	for (int i = 1; i <= n; i++)
		if (kind == 'b')
			xbuf_printf(setup, "dX%d = mu%d*dt + sig%d*dW%d\n", i, i, i, i);
		else
			xbuf_printf(setup, "dX%d = kap%d*(th%d - X%d)*dt + sig%d*dW%d\n", i, i, i, i, i, i);
	if (kind == 'b') {
		xbuf_put(query, "d f(t");
		for (int i = 1; i <= n; i++)
			xbuf_printf(query, ", X%d", i);
		xbuf_put(query, ")\n");
	} else {
		xbuf_put(query, "d exp(");
		for (int i = 1; i <= n; i++)
			xbuf_printf(query, "%sa%d*X%d", i > 1 ? " + " : "", i, i);
		xbuf_put(query, ")");
		for (int i = 1; i <= n; i++)
			xbuf_printf(query, "*X%d", i);
		xbuf_put(query, "\n");
	}
}

/* ------------------------------------------------------------ measuring */

static size_t diff_size(const ito_diff *d)
{
	size_t size = expr_size(d->dt);
	for (size_t k = 0; k < d->n; k++)
		size += expr_size(d->dw[k]);
	return size;
}

static void engine_failure(measurement *out, expr_ctx *ctx)
{
	out->status = expr_error(ctx) == EXPR_OK ? SESSION_INPUT : SESSION_LIMIT;
	snprintf(out->note, sizeof out->note, "%s",
	         expr_error(ctx) == EXPR_OK ? "cannot be set up" : expr_error_message(ctx));
}

/* One repetition of the engine part; returns its seconds, or -1 on failure. */
static double engine_once(const bench_case *bc, measurement *out)
{
	expr_ctx *ctx = expr_ctx_new();
	double seconds = -1;
	if (bc->kind == 'a' || bc->kind == 'd') {
		double start = now();
		const expr *product = linear_product(ctx, bc->form, bc->n);
		double built = now();
		const expr *dx = product ? diff(ctx, product, expr_sym(ctx, "x")) : NULL;
		const expr *dy = dx ? diff(ctx, product, expr_sym(ctx, "y")) : NULL;
		double end = now();
		if (bc->kind == 'a' ? product != NULL : dy != NULL) {
			seconds = bc->kind == 'a' ? built - start : end - built;
			out->size = bc->kind == 'a' ? expr_size(product) : expr_size(dx) + expr_size(dy);
			out->nodes = expr_node_count(ctx);
		} else {
			engine_failure(out, ctx);
		}
	} else {
		model m;
		model_init(&m, ctx);
		expr_sym_set_rank(ctx, m.time, PRN_RANK_TIME);
		const expr *f = build_model(&m, bc->kind, bc->n);
		if (f) {
			ito_diff d;
			double start = now();
			ito_d(&m, NULL, f, &d);
			double end = now();
			if (!ito_diff_failed(&d)) {
				seconds = end - start;
				out->size = diff_size(&d);
				out->nodes = expr_node_count(ctx);
			} else {
				engine_failure(out, ctx);
			}
			ito_diff_free(&d);
		} else {
			engine_failure(out, ctx);
			if (bc->kind == 'b' && bc->n + 1 > EXPR_MAX_FUNC_ARGS)
				snprintf(out->note, sizeof out->note, "f has %d arguments, over the limit %d",
				         bc->n + 1, EXPR_MAX_FUNC_ARGS);
		}
		model_free(&m);
	}
	expr_ctx_free(ctx);
	return seconds;
}

/* One repetition of the query through a session; -1 on failure. */
static double query_once(const bench_case *bc, measurement *out)
{
	xbuf setup = {0}, query = {0};
	if (bc->kind == 'a')
		linear_source(&query, bc->form, bc->n);
	else
		itox_source(&setup, &query, bc->kind, bc->n);
	char *text = NULL;
	size_t length = 0;
	FILE *sink = open_memstream(&text, &length);
	FILE *errors = fopen("/dev/null", "w");
	session_options opt = {.out = sink, .err = errors, .format = FORMAT_TEXT, .seed = 1};
	session *s = session_new(&opt);
	double seconds = -1;
	if (setup.length == 0 || session_run(s, setup.data, setup.length, "setup") == SESSION_OK) {
		double start = now();
		int status = session_run(s, query.data, query.length, "query");
		fflush(sink);
		double end = now();
		if (status == SESSION_OK) {
			seconds = end - start;
			out->printed = length;
		}
	}
	session_free(s);
	fclose(sink);
	fclose(errors);
	free(text);
	xbuf_free(&setup);
	xbuf_free(&query);
	return seconds;
}

/* Repeat f until opt->reps repetitions or the time budget; the median. */
static double repeat(const bench_options *opt, const bench_case *bc, measurement *out,
                     double (*once)(const bench_case *, measurement *))
{
	double times[MAX_REPS];
	int n = 0;
	double spent = 0;
	while (n < opt->reps && (n == 0 || spent < opt->budget)) {
		double t = once(bc, out);
		if (t < 0)
			return -1;
		times[n++] = t;
		spent += t;
	}
	out->reps = n;
	return median(times, n);
}

static void measure(const bench_options *opt, const bench_case *bc, measurement *out)
{
	memset(out, 0, sizeof *out);
	out->query = -1;
	out->engine = repeat(opt, bc, out, engine_once);
	if (out->engine < 0)
		return;
	if (bc->kind != 'd') {
		int reps = out->reps;
		out->query = repeat(opt, bc, out, query_once);
		out->reps = reps;
		if (out->query < 0)
			snprintf(out->note, sizeof out->note, "the query failed");
	}
}

/* Run measure() in a child; false (and a note) when it timed out or died. */
static bool measure_isolated(const bench_options *opt, const bench_case *bc, measurement *out)
{
	int fds[2];
	memset(out, 0, sizeof *out);
	out->engine = out->query = -1;
	fflush(stdout);
	if (pipe(fds) != 0)
		return false;
	pid_t pid = fork();
	if (pid < 0)
		return false;
	if (pid == 0) {
		close(fds[0]);
		measurement result;
		measure(opt, bc, &result);
		ssize_t written = write(fds[1], &result, sizeof result);
		_exit(written == (ssize_t)sizeof result ? 0 : 1);
	}
	close(fds[1]);
	struct pollfd wait_for = {.fd = fds[0], .events = POLLIN};
	int ready;
	do
		ready = poll(&wait_for, 1, (int)(opt->timeout * 1000));
	while (ready < 0 && errno == EINTR);
	bool ok = ready > 0 && read(fds[0], out, sizeof *out) == (ssize_t)sizeof *out;
	if (!ok) {
		kill(pid, SIGKILL);
		snprintf(out->note, sizeof out->note,
		         ready == 0 ? "over the %.0f s timeout" : "the child died", opt->timeout);
		out->status = -1;
	}
	close(fds[0]);
	waitpid(pid, NULL, 0);
	return ok;
}

/* ------------------------------------------------------------ report */

static void print_seconds(double seconds, bool tsv)
{
	if (seconds < 0)
		printf(tsv ? "\t-" : " %10s", "-");
	else
		printf(tsv ? "\t%.6g" : " %10.6f", seconds);
}

static void print_header(bool tsv)
{
	if (tsv)
		printf("case\tn\tengine_s\tquery_s\tsize\tnodes\tprinted\treps\tnote\n");
	else
		printf("%-22s %3s %10s %10s %9s %9s %9s %4s  %s\n", "case", "n", "engine s", "query s",
		       "size", "nodes", "printed", "reps", "note");
}

static void print_count(size_t value, bool present, bool tsv)
{
	if (!present)
		printf(tsv ? "\t-" : " %9s", "-");
	else
		printf(tsv ? "\t%zu" : " %9zu", value);
}

static void print_row(const bench_case *bc, const measurement *r, bool tsv)
{
	printf(tsv ? "%s\t%d" : "%-22s %3d", bc->name, bc->n);
	print_seconds(r->engine, tsv);
	print_seconds(r->query, tsv);
	bool measured = r->engine >= 0;
	print_count(r->size, measured, tsv);
	print_count(r->nodes, measured, tsv);
	print_count(r->printed, measured && r->query >= 0, tsv);
	if (measured)
		printf(tsv ? "\t%d" : " %4d", r->reps);
	else
		printf(tsv ? "\t-" : " %4s", "-");
	printf(tsv ? "\t%s\n" : "  %s\n", r->note);
	fflush(stdout);
}

static void run_series(const bench_options *opt, const char *name, char kind, char form, const int *ns,
                       size_t count)
{
	bool stopped = false;
	for (size_t i = 0; i < count; i++) {
		bench_case bc = {name, kind, form, ns[i]};
		measurement r;
		if (ns[i] > opt->max_n || (opt->only_n && ns[i] != opt->only_n))
			continue;
		if (stopped) {
			memset(&r, 0, sizeof r);
			r.engine = r.query = -1;
			snprintf(r.note, sizeof r.note, "skipped: a smaller n timed out");
		} else if (!measure_isolated(opt, &bc, &r)) {
			stopped = true;
		}
		print_row(&bc, &r, opt->tsv);
	}
}

static void run_all(const bench_options *opt)
{
	static const int twenty[] = {20};
	static const int distinct[] = {4, 6, 8, 10, 20};
	static const int states[] = {2, 5, 10, 15, 20, 40};
	print_header(opt->tsv);
	if (!opt->only || opt->only == 'a') {
		run_series(opt, "a.expand numeric", 'a', 'n', twenty, 1);
		run_series(opt, "a.diff numeric", 'd', 'n', twenty, 1);
		run_series(opt, "a.expand shared", 'a', 's', twenty, 1);
		run_series(opt, "a.diff shared", 'd', 's', twenty, 1);
		run_series(opt, "a.expand distinct", 'a', 'd', distinct, 5);
		run_series(opt, "a.diff distinct", 'd', 'd', distinct, 5);
	}
	if (!opt->only || opt->only == 'b')
		run_series(opt, "b.generic f", 'b', 0, states, 6);
	if (!opt->only || opt->only == 'c')
		run_series(opt, "c.exp-product", 'c', 0, states, 6);
}

/* ------------------------------------------------------------ helpers for tests/bench/run */

static int print_script(char kind, int n)
{
	xbuf setup = {0}, query = {0};
	itox_source(&setup, &query, kind, n);
	fputs(setup.data, stdout);
	fputs(query.data, stdout);
	xbuf_free(&setup);
	xbuf_free(&query);
	return 0;
}

/* The engine's differential as {"drift":"...","diffusion":{"W1":"...",...}}. */
static int print_drift(char kind, int n)
{
	expr_ctx *ctx = expr_ctx_new();
	model m;
	model_init(&m, ctx);
	expr_sym_set_rank(ctx, m.time, PRN_RANK_TIME);
	const expr *f = build_model(&m, kind, n);
	ito_diff d = {0};
	int status = 3;
	if (f)
		ito_d(&m, NULL, f, &d);
	if (f && !ito_diff_failed(&d)) {
		xbuf buf = {0};
		char *text = prn_expr(ctx, d.dt, PRN_TEXT);
		xbuf_put(&buf, "{\"drift\":");
		prn_json_string(&buf, text);
		free(text);
		xbuf_put(&buf, ",\"diffusion\":{");
		for (size_t k = 0; k < d.n; k++) {
			prn_json_string(&buf, expr_sym_name(m.noises[k]));
			xbuf_putc(&buf, ':');
			text = prn_expr(ctx, d.dw[k], PRN_TEXT);
			prn_json_string(&buf, text);
			free(text);
			if (k + 1 < d.n)
				xbuf_putc(&buf, ',');
		}
		xbuf_put(&buf, "}}");
		puts(buf.data);
		xbuf_free(&buf);
		status = 0;
	} else {
		fprintf(stderr, "bench_core: case %c, n = %d: %s\n", kind, n,
		        expr_error(ctx) ? expr_error_message(ctx) : "cannot be set up");
	}
	ito_diff_free(&d);
	model_free(&m);
	expr_ctx_free(ctx);
	return status;
}

static int usage(void)
{
	fprintf(stderr, "usage: bench_core [--reps N] [--budget S] [--timeout S] [--max-n N] [--n N] [--only "
	                "a|b|c] [--tsv]\n"
	                "       bench_core --script b|c N | --drift b|c N\n");
	return 2;
}

int main(int argc, char **argv)
{
	bench_options opt = {.reps = MAX_REPS, .budget = 3, .timeout = 30, .max_n = 1000};
	xalloc_use_for_gmp();
	for (int i = 1; i < argc; i++) {
		const char *arg = argv[i], *value = i + 1 < argc ? argv[i + 1] : NULL;
		bool helper = strcmp(arg, "--script") == 0 || strcmp(arg, "--drift") == 0;
		if (helper) {
			if (i + 2 >= argc || (argv[i + 1][0] != 'b' && argv[i + 1][0] != 'c'))
				return usage();
			int n = atoi(argv[i + 2]);
			if (n < 1 || n > 200)
				return usage();
			return arg[2] == 's' ? print_script(argv[i + 1][0], n)
			                     : print_drift(argv[i + 1][0], n);
		}
		if (strcmp(arg, "--tsv") == 0) {
			opt.tsv = true;
			continue;
		}
		if (!value)
			return usage();
		i++;
		if (strcmp(arg, "--reps") == 0)
			opt.reps = atoi(value);
		else if (strcmp(arg, "--budget") == 0)
			opt.budget = atof(value);
		else if (strcmp(arg, "--timeout") == 0)
			opt.timeout = atof(value);
		else if (strcmp(arg, "--max-n") == 0)
			opt.max_n = atoi(value);
		else if (strcmp(arg, "--n") == 0)
			opt.only_n = atoi(value);
		else if (strcmp(arg, "--only") == 0)
			opt.only = value[0];
		else
			return usage();
	}
	if (opt.reps < 1 || opt.reps > MAX_REPS || opt.timeout <= 0)
		return usage();
	run_all(&opt);
	return 0;
}
