/* replay.c - run the fuzz target over files (the regression corpus) without
 * libFuzzer, so every input that once crashed stays a test under make check. */
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

int main(int argc, char **argv)
{
	int count = 0;
	for (int i = 1; i < argc; i++) {
		FILE *file = fopen(argv[i], "rb");
		if (!file) {
			fprintf(stderr, "replay: cannot open %s\n", argv[i]);
			return 1;
		}
		static uint8_t buffer[1 << 20];
		size_t size = fread(buffer, 1, sizeof buffer, file);
		fclose(file);
		LLVMFuzzerTestOneInput(buffer, size);
		count++;
	}
	printf("replayed %d inputs\n", count);
	return 0;
}
