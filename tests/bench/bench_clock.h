/* bench_clock.h - the clock and the median shared by the benchmark programs
 * (bench_core, bench_query, sim_throughput); header-only, so the `run` script
 * can build bench_query.c alone. */
#ifndef ITOX_BENCH_CLOCK_H
#define ITOX_BENCH_CLOCK_H

#include <stdlib.h>
#include <time.h>

/* Seconds on the monotonic clock. */
static inline double now(void)
{
	struct timespec ts;
	clock_gettime(CLOCK_MONOTONIC, &ts);
	return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

static inline int compare_doubles(const void *a, const void *b)
{
	double x = *(const double *)a, y = *(const double *)b;
	return (x > y) - (x < y);
}

/* The median of n values (sorted in place; the mean of the middle two for even
 * n), or -1 when there are none. */
static inline double median(double *values, int n)
{
	if (n <= 0)
		return -1;
	qsort(values, (size_t)n, sizeof *values, compare_doubles);
	return n % 2 ? values[n / 2] : 0.5 * (values[n / 2 - 1] + values[n / 2]);
}

#endif
