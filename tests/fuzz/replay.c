/* replay.c - run the fuzz target over files (the regression corpus) without
 * libFuzzer, so every input that once crashed stays a test under make check.
 *
 *   replay FILE...      run each file silently; prints the count
 *   replay -v FILE      run one file with its output and messages shown, and
 *                       exit with the session's status (tests/sh/hardening.sh)
 */
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

int fuzz_run(const uint8_t *data, size_t size, FILE *out, FILE *err, const char *origin);

/* Read at most sizeof buffer bytes, like libFuzzer's -max_len (1 MiB here). */
static size_t read_input(const char *path, uint8_t *buffer, size_t capacity)
{
	FILE *file = fopen(path, "rb");
	if (!file) {
		fprintf(stderr, "replay: cannot open %s\n", path);
		exit(2);
	}
	size_t size = fread(buffer, 1, capacity, file);
	fclose(file);
	return size;
}

int main(int argc, char **argv)
{
	static uint8_t buffer[1 << 20];
	if (argc == 3 && strcmp(argv[1], "-v") == 0) {
		size_t size = read_input(argv[2], buffer, sizeof buffer);
		const char *slash = strrchr(argv[2], '/');
		return fuzz_run(buffer, size, stdout, stderr, slash ? slash + 1 : argv[2]);
	}
	FILE *sink = fopen("/dev/null", "w");
	if (!sink)
		return 1;
	int count = 0;
	for (int i = 1; i < argc; i++) {
		size_t size = read_input(argv[i], buffer, sizeof buffer);
		fuzz_run(buffer, size, sink, sink, "replay");
		count++;
	}
	fclose(sink);
	printf("replayed %d inputs\n", count);
	return 0;
}
