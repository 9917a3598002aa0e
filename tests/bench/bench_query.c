/* bench_query.c - the time of one itox statement (a benchmark helper for the
 * scalar cases of tests/bench/run, not a test: it never asserts a timing).
 *
 * Usage: bench_query REPS SETUP QUERY
 * Runs the itox source SETUP untimed in a fresh session, then times
 * session_run(QUERY) (parse, Itô's formula, printing in the text format into
 * a memory stream), REPS times, each in a new session so nothing memoized in
 * an earlier repetition helps; prints the median in seconds.  The method is
 * bench_core's "query" column.  Exit status 2 when a statement fails.
 */
#define _POSIX_C_SOURCE 200809L

#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include "bench_clock.h"
#include "session.h"

#define MAX_REPS 1001

/* One repetition: the seconds of the query, or -1 when a statement failed. */
static double query_once(const char *setup, const char *query)
{
	char *text = NULL;
	size_t length = 0;
	FILE *sink = open_memstream(&text, &length);
	session_options opt = {.out = sink, .err = stderr, .format = FORMAT_TEXT, .seed = 1};
	session *s = session_new(&opt);
	double seconds = -1;
	if (session_run(s, setup, strlen(setup), "setup") == SESSION_OK) {
		double start = now();
		int status = session_run(s, query, strlen(query), "query");
		fflush(sink);
		double end = now();
		if (status == SESSION_OK && length > 0)
			seconds = end - start;
	}
	session_free(s);
	fclose(sink);
	free(text);
	return seconds;
}

int main(int argc, char **argv)
{
	if (argc != 4 || atoi(argv[1]) < 1) {
		fprintf(stderr, "usage: bench_query REPS SETUP QUERY\n");
		return 2;
	}
	int reps = atoi(argv[1]) < MAX_REPS ? atoi(argv[1]) : MAX_REPS;
	static double times[MAX_REPS];
	for (int k = 0; k < reps; k++) {
		times[k] = query_once(argv[2], argv[3]);
		if (times[k] < 0)
			return 2;
	}
	printf("%.6g\n", median(times, reps));
	return 0;
}
