/* fuzz_statements.c - a libFuzzer target: arbitrary bytes through the parser
 * and the whole statement runner, with small limits so that every input ends
 * quickly.  Built by `make fuzz` (clang -fsanitize=fuzzer,address,undefined);
 * tests/fuzz/replay.c runs the same function over the regression corpus
 * under make check, and with -v shows the messages (tests/sh/hardening.sh
 * checks the node limit that way: the program itself has no flag for it).
 */
#include <stdint.h>
#include <stdio.h>
#include <string.h>

#include "expr.h"
#include "session.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);
int fuzz_run(const uint8_t *data, size_t size, FILE *out, FILE *err, const char *origin);

/* The limits of the fuzz target.  The campaign must run at least 500
 * executions per second under ASan and UBSan on one of two shared cores, so
 * an input must cost under 2 ms on average and at most a few tenths of a
 * second; yet every script in tests/ and examples/ runs each statement as it
 * does without these limits, check apart (each cap below was tried on all of
 * them).  Times are from the fuzz build on the shared machine (load 3 to 6;
 * tests/bench/RESULTS.md, "Fuzzing"):
 *
 * - Simulation: a check costs about 35 microseconds per step*path (three
 *   grids of Euler paths, finite differences, statistics), so at most 500
 *   steps*paths, about 20 ms.  Four steps and 100 paths, the least that lets
 *   check decide, fit (corpus/seed-check-small reaches all three verdicts);
 *   the scripts' checks (40,000 steps*paths and more) are refused as a limit,
 *   as they were at the former cap of 2,000. */
enum { FUZZ_MAX_SIMULATION = 500 };
/* - A claim's numeric test (200 points in ball arithmetic by default) is the
 *   slowest part of most claims; 4 points still reach every way through the
 *   test (holds, fails, undecided). */
enum { FUZZ_CLAIM_POINTS = 4 };
/* - Output: laying out a long result costs more than computing it (the
 *   difference printed by corpus/slow-claim-bond-normal-form, over 16 KB,
 *   took 0.5 s of its 0.6 s), so a result is at most 8 KB; the longest result
 *   of any script is 2 KB.  Memory: 256 MiB of expressions, as in
 *   tests/sh/hostile.sh (a chain of let doubling at each step ends early). */
enum { FUZZ_OUTPUT_LIMIT = 1 << 13 };
#define FUZZ_MEMORY_LIMIT ((size_t)256 << 20)
/* - Nodes: the work of an input grows with the nodes it makes (about 35
 *   microseconds a node when powers of sums are expanded and printed), so
 *   5,000 live nodes bound such an input to about 0.2 s.  At 200,000,
 *   corpus/crash-node-limit-in-sum took 10 s and its mutations were most of
 *   the campaign's time.  The largest script, slow-claim-bond-normal-form,
 *   makes 1,400.
 * - Tree height: comparing two nodes walks down their common depth, so d of
 *   500 nested sin took 0.7 s (a claim of it 1.6 s); 100 levels end it at
 *   once, and no script goes deeper than 64.
 * - Terms of one expansion, bits of a power's number, exponents: small, so
 *   (a+b)^100000 and x^(10^100) are refused at once. */
static void fuzz_limits(session *s)
{
	expr_limits *limits = expr_ctx_limits(session_expr_ctx(s));
	limits->max_nodes = 5000;
	limits->max_height = 100;
	limits->max_terms = 2000;
	limits->max_bits = 1 << 12;
	limits->max_exponent = 1000;
}

/* An input whose first line is INTERACTIVE_MARK runs as the REPL runs what
 * is typed (src/repl.c): line by line, a line that leaves a statement
 * unfinished waiting for the next, each entry on its own (an error does not
 * stop the rest), a name declared again replacing its definition, quit
 * ending the input.  Any other input runs as a script.  The mark is a
 * comment, so such a file is still a script for itox.  Only the first
 * INTERACTIVE_LINES lines are read: the REPL parses an unfinished entry again
 * at each new line, so a long one costs the square of its length, and an
 * error does not end the input as it ends a script. */
static const char INTERACTIVE_MARK[] = "# interactive\n";
enum { INTERACTIVE_LINES = 32 };

/* The input is not a C string: no strspn. */
static bool blank(const char *text, size_t length)
{
	for (size_t i = 0; i < length; i++)
		if (text[i] != ' ' && text[i] != '\t' && text[i] != '\n')
			return false;
	return true;
}

static void run_interactive(session *s, const char *text, size_t size, const char *origin)
{
	size_t start = 0; /* of the pending entry */
	int entries = 0, lines = 0;
	for (size_t end = 0; end < size && !session_quit_requested(s); end++) {
		if (text[end] != '\n' && end + 1 < size)
			continue;
		size_t length = end + 1 - start;
		/* an unfinished entry waits for the next line; at the end of the
		 * input it is dropped, as Ctrl-D drops it; a blank one is skipped */
		if (!session_incomplete(text + start, length)) {
			if (!blank(text + start, length))
				session_run_numbered(s, text + start, length, origin, ++entries);
			start = end + 1;
		}
		if (++lines == INTERACTIVE_LINES)
			break;
	}
}

/* Run one input under the fuzz limits, as the program does: the statements,
 * then the end of input (a pending run of corr statements is judged, a
 * standalone LaTeX document closed).  Returns the session's status. */
int fuzz_run(const uint8_t *data, size_t size, FILE *out, FILE *err, const char *origin)
{
	session_options options = {.out = out, .err = err, .seed = 1, .no_files = true,
				   .max_simulation = FUZZ_MAX_SIMULATION, .claim_points = FUZZ_CLAIM_POINTS,
				   .output_limit = FUZZ_OUTPUT_LIMIT, .memory_limit = FUZZ_MEMORY_LIMIT};
	session *s = session_new(&options);
	fuzz_limits(s);
	size_t mark = sizeof INTERACTIVE_MARK - 1;
	if (size >= mark && memcmp(data, INTERACTIVE_MARK, mark) == 0) {
		session_set_interactive(s, true);
		run_interactive(s, (const char *)data, size, origin);
	} else {
		session_run(s, (const char *)data, size, origin);
	}
	int status = session_finish(s);
	session_free(s);
	return status;
}

/* The sink is opened once for the whole campaign: only the session is made
 * anew for each input, so nothing an input leaves behind reaches the next. */
int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
	static FILE *sink;
	if (!sink)
		sink = fopen("/dev/null", "w");
	if (!sink)
		return 0;
	fuzz_run(data, size, sink, sink, "fuzz");
	return 0;
}
