/* fuzz_statements.c - a libFuzzer target: arbitrary bytes through the parser
 * and the whole statement runner, with small limits so that every input ends
 * quickly.  Built by `make fuzz` (clang -fsanitize=fuzzer,address,undefined);
 * tests/fuzz/replay.c runs the same function over the regression corpus
 * under make check.
 */
#include <stdint.h>
#include <stdio.h>

#include "expr.h"
#include "session.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
	FILE *sink = fopen("/dev/null", "w");
	if (!sink)
		return 0;
	session_options options = {.out = sink, .err = sink, .seed = 1, .no_files = true,
				   .max_simulation = 20000};
	session *s = session_new(&options);
	expr_limits *limits = expr_ctx_limits(session_expr_ctx(s));
	limits->max_nodes = 200000;
	limits->max_terms = 5000;
	limits->max_bits = 1 << 14;
	limits->max_exponent = 1000;
	session_run(s, (const char *)data, size, "fuzz");
	session_free(s);
	fclose(sink);
	return 0;
}
