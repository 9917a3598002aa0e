/* writer.h - one writer per output format behind one small interface.
 *
 * A writer receives results (result.h) in the order the statements ran and
 * writes them to its stream: text (write-text.c), LaTeX (write-latex.c), C
 * (write-c.c) or JSON (write-json.c).  Adding a format is one file with one
 * writer_class.  A writer may keep state across results (the C writer's
 * function names, the standalone LaTeX document).
 */
#ifndef ITOX_WRITER_H
#define ITOX_WRITER_H

#include <stdbool.h>
#include <stdio.h>

#include "model.h"
#include "result.h"
#include "xalloc.h"

typedef struct writer writer;

typedef struct writer_class {
	const char *name;
	/* Write one result; false with *error set (a new string) when it cannot
	 * be written in this format (a C name that clashes with <math.h>). */
	bool (*write)(writer *w, const stmt_result *r, char **error);
	/* The end of all input (a standalone document is written here); may be NULL. */
	void (*finish)(writer *w);
	void (*free_state)(writer *w); /* may be NULL */
} writer_class;

struct writer {
	const writer_class *cls;
	FILE *out;
	expr_ctx *ctx;
	const model *model; /* the session's model, for names and the document */
	bool standalone;    /* LaTeX: a whole document */
	bool started;       /* something was written */
	void *state;        /* the format's own */
};

extern const writer_class writer_text, writer_latex, writer_c, writer_json;

writer *writer_new(const writer_class *cls, FILE *out, expr_ctx *ctx, const model *m, bool standalone);
bool writer_write(writer *w, const stmt_result *r, char **error);
void writer_finish(writer *w);
void writer_free(writer *w);

/* Shared by the writers: a line to the stream, flushed. */
void writer_line(writer *w, const char *text);
/* The expression with the result's abbreviations in the given format. */
char *writer_expr(const stmt_result *r, expr_ctx *ctx, const expr *e, prn_format format);
/* The differential's right side in the given format. */
char *writer_diff(const stmt_result *r, expr_ctx *ctx, prn_format format);
/* A failed claim's point: "S=1.2, mu=0.3: left side 1.5, right side 1.4"; NULL without one. */
char *writer_claim_point(const stmt_result *r, expr_ctx *ctx);
/* "the dt part differs", "the dW part differs", "the two sides differ"; NULL
 * when no part is named.  New string. */
char *writer_claim_part(const stmt_result *r);
/* The claim's sentence after its verdict: " (exact)", ": the dt part differs by ..." */
char *writer_claim_detail(const stmt_result *r, expr_ctx *ctx);

/* The rows of a coefficients result (monomial, coefficient) or of a moments
 * result (m1', m_1'(t) ... then, with a solution, m1 or m_1(t) and m_k(t)):
 * new strings; the count.  writer_rows_free releases them. */
size_t writer_rows(const stmt_result *r, expr_ctx *ctx, prn_format format, char ***labels, char ***values);
void writer_rows_free(size_t n, char **labels, char **values);
/* Why a moments result has no solution ("no closed form: ..."); NULL when it has one. */
char *writer_no_solution(const stmt_result *r, expr_ctx *ctx);
/* A forward equation as the left side of = 0, p_t first: "p_t - mu*p_x - ...". */
char *writer_forward_equation(const stmt_result *r, expr_ctx *ctx);

/* Does the result name the measure it was computed under by itself: a
 * differential, diffusion or SDE that prints a noise the measure renamed
 * (dZ under Q: dW = dZ - lambda*dt)?  False under the model's own measure. */
bool writer_shows_measure(const writer *w, const stmt_result *r);

/* The left side of a differential: "d(log(S))", "dS", "\\mathrm{d}\\log S_{t}";
 * "d(B)" for a noise B under another measure, where dB is the increment of
 * B's Brownian motion under that measure. */
char *writer_diff_label(const writer *w, const stmt_result *r, prn_format format);

/* A check's report (write-check.c): its table for people, lines ending in
 * '\n' (the text writer prints it, the LaTeX and C writers as comments); the
 * verdict "consistent (tolerance ...)" or "inconsistent: REASONS (...)"; the
 * reasons joined by "; "; the name of a finite-difference row (f_S, f_{S1}).
 * Each returns or appends a new string. */
void writer_check_table(expr_ctx *ctx, const check_result *r, xbuf *out);
char *writer_check_verdict(const check_result *r);
char *writer_check_reasons(const check_result *r);
char *writer_check_fd_name(const check_fd_row *row);
char *writer_check_concrete(expr_ctx *ctx, const check_concrete *c); /* "g(x, y) = body" */

#endif
