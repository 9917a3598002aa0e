/* session-internal.h - what the files of the session share (private to them).
 *
 * session.c  the statement table and the run loop
 * diag.c     messages: file:line:column, the line and a caret; suggestions
 * lower.c    syntax to engine values (expressions and differentials)
 * decl.c     declarations: param, assume, noise, corr, func, let, SDEs
 * decl-change.c  measure and state; decl-forget.c  forget, declarations made again
 * query.c    queries, claim and check, and the results they hand to the writers
 * persist.c  show, save, load and format
 *
 * Everything not declared here is static in its file.  A handler of the
 * statement table runs one statement: it returns false after reporting an
 * error, and a statement that fails leaves the model as it was.
 */
#ifndef ITOX_SESSION_INTERNAL_H
#define ITOX_SESSION_INTERNAL_H

#include <stdbool.h>
#include <stddef.h>

#include "ast.h"
#include "expr.h"
#include "ito.h"
#include "model.h"
#include "result.h"
#include "session.h"
#include "writer.h"
#include "xalloc.h"

/* The whole state of one session. */
struct session {
	session_options opt;
	expr_ctx *ctx;
	model model;
	session_format format;
	int status;
	bool quit;
	/* the source being run, for error lines */
	const char *source;
	size_t length;
	const char *origin;
	const model_measure *measure; /* the measure of the current query */
	const ast_list *run_list;     /* the statements of the source being run */
	size_t run_index;             /* the one running now */
	bool interactive;             /* the REPL: a declaration made again replaces the old one */
	int load_depth;
	unsigned long claim_count;
	bool text_too_long;       /* text_expr met an expression over the output budget */
	unsigned long reports;    /* errors reported so far (a failed statement says why) */
	int fixed_line;           /* for -e statements: messages say -e:N:COLUMN */
	bool in_sde;              /* evaluating an SDE's right side: assumed states may appear */
	bool abbreviate;          /* print let names for their definitions in results */
	bool corr_block;          /* inside a run of corr statements */
	const expr **corr_before; /* the matrix before the run */
	size_t corr_before_n;
	ast_loc corr_last;             /* the last corr of the run, for the message */
	char *corr_text, *corr_origin; /* its line and origin */
	int corr_fixed_line;
	writer *writers[4]; /* one per format, made on first use */
};

/* The source text being run, for the line and caret of messages; a nested
 * run (load, a corr message given later, session_expr) swaps it in and out. */
typedef struct source_frame {
	const char *source;
	size_t length;
	const char *origin;
	int fixed_line;
} source_frame;

/* The output budget of one printed result, in bytes. */
static inline size_t session_output_limit(const session *s)
{
	return s->opt.output_limit ? s->opt.output_limit : SESSION_OUTPUT_LIMIT;
}

/* An evaluated expression: a number-valued expression or a differential. */
typedef struct value {
	bool is_diff;
	const expr *e;
	ito_diff d;
} value;

/* A result being made: the place and measure of the statement, and the let
 * names that may abbreviate its subexpressions. */
typedef struct pending {
	stmt_result r;
	prn_abbrev abbrev;
	const expr **nodes;
	const char **names;
	bool *used;
	char *statement;
} pending;

/* ------------------------------------------------------------------ diag.c */

/* Make source the text that messages quote; returns the one it replaces. */
source_frame enter_source(session *s, const char *source, size_t length, const char *origin, int fixed_line);
/* Put back the source that enter_source() replaced. */
void leave_source(session *s, source_frame outer);
/* Raise the status of the current run to status (never lower it). */
void raise_status(session *s, int status);
/* Read the whole file PATH into BUF; 0, or the errno that says why not. */
int read_source_file(const char *path, xbuf *buf);
/* Line number line of the current source: its start and length without the newline. */
void source_line(const session *s, int line, const char **start, size_t *length);
/* An error at loc (NULL: none): file:line:column, the line and a caret; raises the status. */
void report(session *s, int status, const ast_loc *loc, const char *format, ...)
        __attribute__((format(printf, 4, 5)));
/* A remark at loc (file:line:column: note: ...) that is not an error. */
void note(session *s, const ast_loc *loc, const char *format, ...) __attribute__((format(printf, 3, 4)));
/* Report the engine's error (limit, interrupt, division by zero) if one is set. */
bool engine_failed(session *s, const ast_loc *loc);
/* The symbol of a name being declared, or NULL after reporting why the
 * engine has none (the node limit or the memory budget, spent earlier). */
const expr *declared_symbol(session *s, const char *name, const ast_loc *loc);
/* A differential that failed (a limit, an interrupt): reported, freed, true. */
bool differential_failed(session *s, ito_diff *d, const ast_loc *loc);
/* The declared or built-in name closest to name, or NULL when none is close. */
const char *suggest(session *s, const char *name);
/* Report an unknown name, with a suggestion when one is close. */
void unknown_name(session *s, const ast_loc *loc, const char *name);
/* The noises under the measure q (NULL: the model's), each with prefix ("d"
 * or ""): "dW, dB".  New string. */
char *noise_list(const session *s, const model_measure *q, const char *prefix);
/* Report a name that a declaration uses before it is declared: a
 * suggestion when one is close, else how to declare it. */
void undeclared_name(session *s, const ast_loc *loc, const char *name);
/* Will a later statement of the source being run declare name as a state
 * (dNAME = ..., state NAME = ...)?  assume and SDEs may name it early. */
bool declared_later(const session *s, const char *name);
/* The entry of a name that must be of one kind; NULL after a message. */
model_entry *lookup_kind(session *s, const ast_loc *loc, const char *name, model_kind kind);

/* ------------------------------------------------------------------ lower.c */

/* Free what a value owns (a differential's coefficients). */
void value_free(value *v);
/* Is text a plain identifier (a letter, then letters, digits and '_')? */
bool is_identifier(const char *text);
/* The symbol of a name that has dynamics: "dX" -> X when X is a state or noise. */
const expr *differential_of(session *s, const char *name);
/* Evaluate an expression or a differential; false after reporting. */
bool eval_node(session *s, const ast_node *n, value *out);
/* Evaluate an expression that must not be a differential; false after reporting. */
bool eval_scalar(session *s, const ast_node *n, const expr **out);
/* eval_scalar for an expression Itô's formula is applied to: each root, log,
 * quotient and power as written must have a value wherever the processes can
 * go, not only what the whole simplified to (sqrt(g)^2 is g, but for a g
 * that can be negative there is no such process); false after reporting at
 * the part. */
bool eval_process(session *s, const ast_node *n, const expr **out);
/* The symbol a NAME node denotes as a variable; NULL after "VERB the KIND 'NAME'TAIL". */
const expr *variable_symbol(session *s, const ast_node *n, const char *verb, const char *tail);
/* Evaluate an expression to a finite double (check's points and options). */
bool numeric_value(session *s, const ast_node *n, double *out);

/* ------------------------------------------------------------------ decl.c */

/* Does a declaration made again replace the old one (the REPL, not a
 * loaded file)?  Otherwise a different definition is an error. */
bool replaces(const session *s);
/* Say that a declaration replaced an old one ("replaced the SDE of S"). */
void replaced(session *s, const char *format, ...) __attribute__((format(printf, 2, 3)));
/* What uses a declaration ("the SDE of S and the measure Q"), and how many;
 * NULL when nothing does (decl-forget.c). */
char *declaration_users(session *s, const model_entry *entry, size_t *count);
/* dX = ... for a state that has an SDE already (decl-forget.c). */
bool sde_again(session *s, const ast_node *st, model_entry *entry, bool stratonovich);

/* May name be declared (not reserved, not taken, no clash with a d-name)? */
bool check_new_name(session *s, const ast_loc *loc, const char *name, bool allow_arg);
/* May name be declared (again) as a let or a measure?  Reports when not. */
bool may_declare(session *s, const ast_loc *loc, const char *name, model_kind kind);
/* Declare the generic function name(args) at loc; args are NAME nodes. */
bool declare_function(session *s, const ast_loc *loc, const char *name, size_t nargs, ast_node *const *args);
/* The end of a run of corr statements: judge the matrix, undo the run if it is not PSD. */
bool close_corr_block(session *s);
/* param NAME [COND], ... */
bool run_param(session *s, const ast_node *st);
/* assume NAME COND, ... */
bool run_assume(session *s, const ast_node *st);
/* noise W, ... */
bool run_noise(session *s, const ast_node *st);
/* corr(W, B) = rho */
bool run_corr(session *s, const ast_node *st);
/* func f(ARGS) */
bool run_func(session *s, const ast_node *st);
/* let NAME = EXPR */
bool run_let(session *s, const ast_node *st);
/* dX = ... and stratonovich dX = ... */
bool run_sde(session *s, const ast_node *st);
/* measure Q: dW = dZ + shift*dt, ... */
bool run_measure(session *s, const ast_node *st);
/* state x = FORWARD where X = INVERSE */
bool run_state(session *s, const ast_node *st);

/* ------------------------------------------------------------------ decl-forget.c */

/* forget NAME: remove a declaration that nothing else uses */
bool run_forget(session *s, const ast_node *st);

/* ------------------------------------------------------------------ query.c */

/* Plain text of an expression, every let spelled out (show, save, messages). */
char *text_expr(session *s, const expr *e);
/* An error: the named thing is over the output budget (exit status 3). */
void report_output_budget(session *s, const ast_node *st, const char *what);
/* Start a result of statement st: its place, measure and abbreviations. */
void result_start(session *s, pending *p, result_kind kind, const ast_node *st);
/* Hand the result to the current writer and free p; false after reporting. */
bool result_emit(session *s, pending *p, const ast_node *st);
/* The SDE of a state in either convention, under the current measure. */
bool state_sde(session *s, const ast_node *st, model_entry *entry, bool stratonovich, ito_diff *d);
/* a bare expression or differential */
bool run_expr_statement(session *s, const ast_node *st);
/* d, drift, diffusion and generator EXPR: d EXPR, its dt part or its dW part */
bool run_part(session *s, const ast_node *st);
/* qv A [, B] */
bool run_qv(session *s, const ast_node *st);
/* pde V(t, X...) [discount r] */
bool run_pde(session *s, const ast_node *st);
/* The unknown function of pde and forward (st->text(st->items)), declared
 * when new, after checking that the equation closes; NULL after a message. */
const expr *equation_unknown(session *s, const ast_node *st, const char *what, const expr *discount);
/* forward p(t, X...), coefficients E in x [, y...], moments X, K (query-algebra.c) */
bool run_forward(session *s, const ast_node *st);
bool run_coefficients(session *s, const ast_node *st);
bool run_moments(session *s, const ast_node *st);
/* sde X [stratonovich] */
bool run_sde_display(session *s, const ast_node *st);
/* claim A = B */
bool run_claim(session *s, const ast_node *st);
/* check [d] F [= DIFFERENTIAL] at ... [over ...] */
bool run_check(session *s, const ast_node *st);

/* ------------------------------------------------------------------ persist.c */

/* show [NAME] */
bool run_show(session *s, const ast_node *st);
/* save PATH */
bool run_save(session *s, const ast_node *st);
/* load PATH */
bool run_load(session *s, const ast_node *st);
/* format NAME */
bool run_format(session *s, const ast_node *st);

#endif
