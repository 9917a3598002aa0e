/* session.h - runs statements: syntax tree -> model/ito/verify -> printer.
 *
 * A session is the whole state of one run: the expression context, the model,
 * the output format and the exit status so far.  It writes results to `out`
 * and diagnostics to `err`, streams its caller chose.
 */
#ifndef ITOX_SESSION_H
#define ITOX_SESSION_H

#include <signal.h>
#include <stdbool.h>
#include <stdio.h>

/* Exit statuses (LANGUAGE.md). */
enum {
	SESSION_OK = 0,
	SESSION_FAILED = 1,   /* a claim or check failed */
	SESSION_INPUT = 2,    /* an error in the input */
	SESSION_LIMIT = 3,    /* an internal limit was hit */
};

/* The default budgets: memory for expressions (1 GiB: a laptop affords it),
 * and the length of one printed result (10 MB: more than anyone reads). */
#define SESSION_MEMORY_LIMIT ((size_t)1 << 30)
#define SESSION_OUTPUT_LIMIT ((size_t)10000000)

typedef enum session_format { FORMAT_TEXT, FORMAT_LATEX, FORMAT_C, FORMAT_JSON } session_format;

typedef struct session_options {
	FILE *out, *err;
	session_format format;
	unsigned long seed;
	bool quiet;
	bool standalone;			/* LaTeX: one whole document at the end */
	double time_limit;			/* seconds per statement; 0 for none */
	volatile sig_atomic_t *interrupt;	/* 1: Ctrl-C, 2: time limit; may be NULL */
	void (*before_statement)(void *data);	/* e.g. arm the time limit; may be NULL */
	bool no_files;				/* refuse save and load (fuzzing, sandboxes) */
	long max_simulation;			/* limit on steps*paths of check; 0: default */
	size_t claim_points;			/* points of a claim's numeric test; 0: default (fuzzing: fewer) */
	size_t memory_limit;			/* bytes of symbolic work; 0: SESSION_MEMORY_LIMIT */
	size_t output_limit;			/* bytes of one printed result; 0: SESSION_OUTPUT_LIMIT */
	bool progress;				/* a check that runs over a second shows its progress on err */
	void *hook_data;
} session_options;

typedef struct session session;

session *session_new(const session_options *options);
void session_free(session *s);

/* Run a source text (a script, one -e statement, a REPL entry).  origin names
 * it in messages ("model.itox", "-e:2", "<stdin>").  Returns the status of
 * this run; session_status() is the worst status so far. */
int session_run(session *s, const char *source, size_t length, const char *origin);
int session_run_file(session *s, const char *path);
/* Run the index'th -e statement (messages are -e:INDEX:COLUMN). */
int session_run_argument(session *s, const char *statement, int index);
/* Run a source whose places are all ORIGIN:INDEX (the REPL's entries). */
int session_run_numbered(session *s, const char *source, size_t length, const char *origin, int index);

/* Does source end in the middle of a statement (open parenthesis, trailing
 * operator)?  The REPL then reads a continuation line. */
bool session_incomplete(const char *source, size_t length);

/* The end of all input: judge what waits for more (a run of corr statements).
 * Returns the final status. */
int session_finish(session *s);

/* Interactive (the REPL): declaring a state's SDE, a parameter's domain, a
 * correlation, a let or a measure again replaces the old definition and
 * says so.  Otherwise (scripts, -e, loaded files) that is an error. */
void session_set_interactive(session *s, bool interactive);

int session_status(const session *s);
bool session_quit_requested(const session *s);

/* Parse and evaluate one expression in the session (for tests and tools):
 * returns the canonical node, or NULL after reporting an error. */
struct expr;
struct expr_ctx;
const struct expr *session_expr(session *s, const char *text);
struct expr_ctx *session_expr_ctx(session *s);

/* Names declared so far (for completion): calls fn for each. */
void session_each_name(const session *s, void (*fn)(const char *name, void *data), void *data);

#endif
