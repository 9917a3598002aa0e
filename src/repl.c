/* repl.c - readline loop: history, completion, continuation lines, Ctrl-C.
 *
 * readline's callback interface is used with readline's own signal handling
 * off: SIGINT only sets a flag (no jump out of the handler), the select()
 * loop sees EINTR and abandons the line; during a computation the engine
 * polls the same flag and returns with an "interrupted" error.
 */
#include <config.h>

#include "repl.h"

#include <errno.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/select.h>
#include <sys/stat.h>
#include <unistd.h>

#include <readline/history.h>
#include <readline/readline.h>

#include "ast.h"
#include "expr.h"
#include "help.h"
#include "xalloc.h"

static const char main_prompt[] = "itox> ";
static const char more_prompt[] = "  ... ";

/* The state of the loop (readline's callbacks carry no user pointer). */
static struct repl_state {
	session *s;
	volatile sig_atomic_t *interrupt;
	xbuf pending;
	bool done;
	char *history_path;
	int entries;
} repl;

static char *history_file(void)
{
	const char *state = getenv("XDG_STATE_HOME");
	const char *home = getenv("HOME");
	char *dir;
	if (state && *state)
		dir = xasprintf("%s/itox", state);
	else if (home && *home)
		dir = xasprintf("%s/.local/state/itox", home);
	else
		return NULL;
	/* mkdir -p */
	for (char *p = dir + 1; *p; p++)
		if (*p == '/') {
			*p = '\0';
			mkdir(dir, 0700);
			*p = '/';
		}
	mkdir(dir, 0700);
	char *path = xasprintf("%s/history", dir);
	free(dir);
	return path;
}

/* ------------------------------------------------------------------ completion */

typedef struct name_list {
	char **items;
	size_t n, cap;
} name_list;

static void add_name(const char *name, void *data)
{
	name_list *list = data;
	if (list->n == list->cap) {
		list->cap = list->cap ? list->cap * 2 : 64;
		list->items = xreallocarray(list->items, list->cap, sizeof *list->items);
	}
	list->items[list->n++] = xstrdup(name);
}

static name_list candidates;

static void build_candidates(void)
{
	for (size_t i = 0; i < candidates.n; i++)
		free(candidates.items[i]);
	candidates.n = 0;
	for (size_t i = 0; ast_keywords[i]; i++)
		add_name(ast_keywords[i], &candidates);
	for (size_t f = 0; expr_function_spelling(f); f++)
		add_name(expr_function_spelling(f), &candidates);
	add_name("text", &candidates);
	add_name("latex", &candidates);
	add_name("json", &candidates);
	session_each_name(repl.s, add_name, &candidates);
}

static char *complete_next(const char *text, int state)
{
	static size_t index;
	if (state == 0) {
		index = 0;
		build_candidates();
	}
	size_t length = strlen(text);
	while (index < candidates.n) {
		const char *name = candidates.items[index++];
		if (strncmp(name, text, length) == 0)
			return strdup(name); /* readline frees it with free() */
	}
	return NULL;
}

static char **complete(const char *text, int start, int end)
{
	(void)start;
	(void)end;
	rl_attempted_completion_over = 1;
	return rl_completion_matches(text, complete_next);
}

/* ------------------------------------------------------------------ lines */

static void run_pending(void)
{
	char *source = repl.pending.data ? repl.pending.data : "";
	*repl.interrupt = 0;
	/* places read repl:N, N counting the entries: repl:8: claim holds (exact) */
	session_run_numbered(repl.s, source, strlen(source), "repl", ++repl.entries);
	*repl.interrupt = 0;
	if (session_quit_requested(repl.s))
		repl.done = true;
}

static void on_line(char *line)
{
	if (!line) {
		/* Ctrl-D: leave (an unfinished entry is dropped) */
		repl.done = true;
		rl_callback_handler_remove();
		fputc('\n', stdout);
		return;
	}
	if (repl.pending.length)
		xbuf_putc(&repl.pending, '\n');
	xbuf_put(&repl.pending, line);
	free(line);
	const char *source = repl.pending.data;
	if (session_incomplete(source, repl.pending.length)) {
		rl_set_prompt(more_prompt);
		return;
	}
	bool blank = strspn(source, " \t\n") == repl.pending.length;
	if (!blank) {
		/* history keeps an entry on one line */
		char *entry = xstrdup(source);
		for (char *c = entry; *c; c++)
			if (*c == '\n')
				*c = ' ';
		add_history(entry);
		if (repl.history_path)
			append_history(1, repl.history_path);
		free(entry);
		rl_callback_handler_remove();
		run_pending();
	}
	xbuf_free(&repl.pending);
	if (!repl.done)
		rl_callback_handler_install(main_prompt, on_line);
	else
		rl_callback_handler_remove();
}

static void on_sigint(int sig)
{
	(void)sig;
	*repl.interrupt = 1;
}

int repl_run(session *s, volatile sig_atomic_t *interrupt, bool quiet)
{
	memset(&repl, 0, sizeof repl);
	repl.s = s;
	repl.interrupt = interrupt;
	session_set_interactive(s, true);
	repl.history_path = history_file();
	if (repl.history_path) {
		FILE *touch = fopen(repl.history_path, "a");
		if (touch)
			fclose(touch);
		read_history(repl.history_path);
	}
	rl_readline_name = "itox";
	rl_attempted_completion_function = complete;
	rl_catch_signals = 0;
	rl_catch_sigwinch = 1;
	struct sigaction action;
	memset(&action, 0, sizeof action);
	action.sa_handler = on_sigint;
	sigemptyset(&action.sa_mask);
	action.sa_flags = 0; /* no SA_RESTART: select() returns EINTR */
	sigaction(SIGINT, &action, NULL);
	if (!quiet)
		printf("itox %s: symbolic Ito calculus. 'help' lists the statements; Ctrl-D leaves.\n"
		       "Results are mathematics, not advice: validate a model before relying on it.\n",
		       PACKAGE_VERSION);
	rl_callback_handler_install(main_prompt, on_line);
	while (!repl.done) {
		fd_set fds;
		FD_ZERO(&fds);
		FD_SET(fileno(rl_instream), &fds);
		int ready = select(fileno(rl_instream) + 1, &fds, NULL, NULL, NULL);
		if (ready < 0 && errno == EINTR) {
			if (*interrupt) {
				/* Ctrl-C: abandon the line (and any continuation) */
				*interrupt = 0;
				xbuf_free(&repl.pending);
				rl_free_line_state();
				rl_crlf();
				rl_replace_line("", 0);
				rl_callback_handler_remove();
				rl_callback_handler_install(main_prompt, on_line);
			}
			continue;
		}
		if (ready > 0)
			rl_callback_read_char();
	}
	rl_callback_handler_remove();
	xbuf_free(&repl.pending);
	free(repl.history_path);
	for (size_t i = 0; i < candidates.n; i++)
		free(candidates.items[i]);
	free(candidates.items);
	memset(&candidates, 0, sizeof candidates);
	return 0;
}
