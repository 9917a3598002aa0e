/* fuzz_statements.c - a libFuzzer target: arbitrary bytes through the parser
 * and the whole statement runner, with small limits so that every input ends
 * quickly.  Built by `make fuzz` (clang -fsanitize=fuzzer,address,undefined);
 * tests/fuzz/replay.c runs the same function over the regression corpus
 * under make check, and with -v shows the messages (tests/sh/hardening.sh
 * checks the node limit that way: the program itself has no flag for it).
 */
#include <stdint.h>
#include <stdio.h>

#include "expr.h"
#include "session.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);
int fuzz_run(const uint8_t *data, size_t size, FILE *out, FILE *err, const char *origin);

/* The limits of the fuzz target: small enough that a typical input runs in
 * about a millisecond (the campaign must reach hundreds of executions per
 * second under the sanitizers), large enough that the examples still reach
 * every statement.  Simulation work is capped by FUZZ_MAX_SIMULATION
 * (steps*paths): check's default of 1000 steps and 20,000 paths is refused
 * as a limit, a check over steps=10, paths=100 runs. */
enum { FUZZ_MAX_SIMULATION = 2000 };
/* A claim's numeric test is the slowest part of most inputs (200 points in
 * ball arithmetic); the fuzz target tries 4, which still reaches every way
 * through the test (holds, fails, undecided). */
enum { FUZZ_CLAIM_POINTS = 4 };
/* Budgets as in tests/sh/hostile.sh: a printed result of 64 KB, 256 MiB of
 * expressions (a chain of let doubling at each step is refused early). */
enum { FUZZ_OUTPUT_LIMIT = 1 << 16 };
#define FUZZ_MEMORY_LIMIT ((size_t)256 << 20)
static void fuzz_limits(session *s)
{
	expr_limits *limits = expr_ctx_limits(session_expr_ctx(s));
	limits->max_nodes = 200000;
	limits->max_terms = 2000;
	limits->max_bits = 1 << 12;
	limits->max_exponent = 1000;
}

/* Run one input under the fuzz limits; returns the session's status. */
int fuzz_run(const uint8_t *data, size_t size, FILE *out, FILE *err, const char *origin)
{
	session_options options = {.out = out, .err = err, .seed = 1, .no_files = true,
				   .max_simulation = FUZZ_MAX_SIMULATION, .claim_points = FUZZ_CLAIM_POINTS,
				   .output_limit = FUZZ_OUTPUT_LIMIT, .memory_limit = FUZZ_MEMORY_LIMIT};
	session *s = session_new(&options);
	fuzz_limits(s);
	session_run(s, (const char *)data, size, origin);
	int status = session_status(s);
	session_free(s);
	return status;
}

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
	FILE *sink = fopen("/dev/null", "w");
	if (!sink)
		return 0;
	fuzz_run(data, size, sink, sink, "fuzz");
	fclose(sink);
	return 0;
}
