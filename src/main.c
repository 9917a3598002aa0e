/* main.c - the itox program: command line, scripts, -e statements, the REPL. */
#include <config.h>

#include <errno.h>
#include <getopt.h>
#include <signal.h>
#include <stdbool.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/time.h>
#include <unistd.h>

#include "repl.h"
#include "session.h"
#include "xalloc.h"

/* A file or an -e statement (statement: its ordinal among the -e, from 1). */
typedef struct input {
	const char *text;
	int statement;
} input;

static volatile sig_atomic_t interrupt_flag;
static double time_limit;

static void on_alarm(int sig)
{
	(void)sig;
	interrupt_flag = 2;
}

/* Arm the per-statement time limit (a timer that raises the interrupt flag). */
static void arm_timer(void *data)
{
	(void)data;
	if (interrupt_flag == 2)
		interrupt_flag = 0;
	if (time_limit <= 0)
		return;
	struct itimerval timer = {{0, 0}, {0, 0}};
	timer.it_value.tv_sec = (time_t)time_limit;
	timer.it_value.tv_usec = (suseconds_t)((time_limit - (double)(time_t)time_limit) * 1e6);
	if (timer.it_value.tv_sec == 0 && timer.it_value.tv_usec == 0)
		timer.it_value.tv_usec = 1;
	setitimer(ITIMER_REAL, &timer, NULL);
}

/* A budget given as a positive whole number of units of 2^shift bytes. */
static bool parse_budget(const char *text, int shift, size_t *bytes)
{
	char *end;
	errno = 0;
	unsigned long long n = strtoull(text, &end, 10);
	if (errno || end == text || *end || *text == '-' || n == 0 || n > (SIZE_MAX >> shift))
		return false;
	*bytes = (size_t)n << shift;
	return true;
}

static void usage(FILE *out)
{
	fputs("Usage: itox [OPTION]... [FILE]...\n"
	      "Symbolic Ito calculus: the exact dynamics of transformed SDE states, generators\n"
	      "and backward PDEs, Stratonovich and Girsanov, claims that verify derivations.\n"
	      "\n"
	      "Run the FILEs and -e statements in the order given, in one session.\n"
	      "Otherwise run the REPL if standard input is a terminal, or read it as a script.\n"
	      "\n"
	      "  -e STATEMENT        run STATEMENT (repeatable)      itox -e 'param a' -e 'log(exp(a))'\n"
	      "      --format=FMT    text, latex, c or json          itox --format=latex model.itox\n"
	      "      --standalone    with latex: a whole document     itox --format=latex --standalone m.itox\n"
	      "      --seed=N        seed of the random tests         itox --seed=7 claims.itox\n"
	      "      --time-limit=S  seconds allowed per statement    itox --time-limit=10 big.itox\n"
	      "      --memory-limit=M MiB for expressions (1024)   itox --memory-limit=4096 big.itox\n"
	      "      --output-limit=N bytes of a result (10^7)     itox --output-limit=100000000 big.itox\n"
	      "      --quiet         no banner in the REPL            itox --quiet\n"
	      "      --help          this text                        itox --help\n"
	      "      --version       the version                      itox --version\n"
	      "\n"
	      "Exit status: 0 all went well and every claim held; 1 a claim or check failed;\n"
	      "2 an error in the input; 3 a limit (size, time, memory, output) was hit.\n"
	      "\n"
	      "Results are mathematics, not advice: a model's assumptions must be validated and\n"
	      "results reviewed under your own model-risk policy before they price or hedge anything.\n",
	      out);
}

int main(int argc, char **argv)
{
	enum { OPT_FORMAT = 256, OPT_SEED, OPT_QUIET, OPT_HELP, OPT_VERSION, OPT_TIME, OPT_STANDALONE,
	       OPT_MEMORY, OPT_OUTPUT };
	static const struct option options[] = {
		{"format", required_argument, NULL, OPT_FORMAT},
		{"seed", required_argument, NULL, OPT_SEED},
		{"quiet", no_argument, NULL, OPT_QUIET},
		{"standalone", no_argument, NULL, OPT_STANDALONE},
		{"help", no_argument, NULL, OPT_HELP},
		{"version", no_argument, NULL, OPT_VERSION},
		{"time-limit", required_argument, NULL, OPT_TIME},
		{"memory-limit", required_argument, NULL, OPT_MEMORY},
		{"output-limit", required_argument, NULL, OPT_OUTPUT},
		{NULL, 0, NULL, 0},
	};
	session_options opt = {0};
	opt.seed = 1;
	/* files and -e statements, in the order of the command line */
	input *inputs = xcalloc((size_t)argc + 1, sizeof *inputs);
	size_t ninputs = 0;
	int nstatements = 0;
	int c;
	/* "-" first: getopt returns each file in its place (code 1) instead of
	 * moving the files after the options */
	while ((c = getopt_long(argc, argv, "-e:", options, NULL)) != -1) {
		switch (c) {
		case 1:
			inputs[ninputs++] = (input){optarg, 0};
			break;
		case 'e':
			inputs[ninputs++] = (input){optarg, ++nstatements};
			break;
		case OPT_FORMAT:
			if (strcmp(optarg, "text") == 0)
				opt.format = FORMAT_TEXT;
			else if (strcmp(optarg, "latex") == 0)
				opt.format = FORMAT_LATEX;
			else if (strcmp(optarg, "c") == 0)
				opt.format = FORMAT_C;
			else if (strcmp(optarg, "json") == 0)
				opt.format = FORMAT_JSON;
			else {
				fprintf(stderr, "itox: unknown format '%s' (text, latex, c or json)\n", optarg);
				free(inputs);
				return 2;
			}
			break;
		case OPT_SEED: {
			char *end;
			opt.seed = strtoul(optarg, &end, 10);
			if (*end || !*optarg) {
				fprintf(stderr, "itox: --seed needs a non-negative integer, not '%s'\n", optarg);
				free(inputs);
				return 2;
			}
			break;
		}
		case OPT_TIME: {
			char *end;
			time_limit = strtod(optarg, &end);
			if (*end || !(time_limit > 0)) {
				fprintf(stderr, "itox: --time-limit needs a positive number of seconds, not '%s'\n", optarg);
				free(inputs);
				return 2;
			}
			break;
		}
		case OPT_MEMORY:
		case OPT_OUTPUT: {
			size_t *budget = c == OPT_MEMORY ? &opt.memory_limit : &opt.output_limit;
			if (!parse_budget(optarg, c == OPT_MEMORY ? 20 : 0, budget)) {
				fprintf(stderr, "itox: --%s needs a positive whole number of %s, not '%s'\n",
				        c == OPT_MEMORY ? "memory-limit" : "output-limit",
				        c == OPT_MEMORY ? "MiB" : "bytes", optarg);
				free(inputs);
				return 2;
			}
			break;
		}
		case OPT_QUIET:
			opt.quiet = true;
			break;
		case OPT_STANDALONE:
			opt.standalone = true;
			break;
		case OPT_HELP:
			usage(stdout);
			free(inputs);
			return 0;
		case OPT_VERSION:
			printf("itox %s\n", PACKAGE_VERSION);
			free(inputs);
			return 0;
		default:
			fputs("Try 'itox --help'.\n", stderr);
			free(inputs);
			return 2;
		}
	}
	opt.interrupt = &interrupt_flag;
	opt.time_limit = time_limit;
	opt.progress = isatty(STDERR_FILENO);
	if (time_limit > 0) {
		signal(SIGALRM, on_alarm);
		opt.before_statement = arm_timer;
	}
	session *s = session_new(&opt);
	int status = 0;
	for (int i = optind; i < argc; i++) /* the files after "--" */
		inputs[ninputs++] = (input){argv[i], 0};
	for (size_t i = 0; i < ninputs && session_status(s) < 2 && !session_quit_requested(s); i++) {
		if (inputs[i].statement)
			session_run_argument(s, inputs[i].text, inputs[i].statement);
		else
			session_run_file(s, inputs[i].text);
	}
	if (ninputs == 0) {
		if (isatty(STDIN_FILENO)) {
			repl_run(s, &interrupt_flag, opt.quiet);
		} else {
			xbuf buf = {0};
			char chunk[65536];
			size_t n;
			while ((n = fread(chunk, 1, sizeof chunk, stdin)) > 0)
				xbuf_putn(&buf, chunk, n);
			session_run(s, buf.data ? buf.data : "", buf.length, "<stdin>");
			xbuf_free(&buf);
		}
	}
	status = session_finish(s);
	session_free(s);
	free(inputs);
	return status;
}
