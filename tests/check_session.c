/* check_session.c - unit tests of the session: a statement applies whole or
 * not at all (issue 14, item 2); forget and declarations replaced in the
 * REPL (item 4) through the library, under valgrind with the rest.
 *
 * A script stops at its first error, so what the model is after a failed
 * statement is seen here, through the library: one session runs a model,
 * then a statement that fails part-way, then `show`, whose text must be the
 * same as before the failure; the symbols' assumptions must be as before too
 * (a sign given by the failed statement would simplify sqrt(x^2) to x).
 * The expected texts are the model's own declarations (common practice, no
 * source). */

#include <check.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "check_suites.h"
#include "session.h"

static session *sess;
static FILE *out, *err;

/* A model in an invented scenario: a commodity price S with a mean-reverting
 * log-level and a second, correlated noise. */
static const char *model = "param kappa, theta, sigma > 0\n"
                           "param a, rho in [-1, 1]\n"
                           "noise W, B\n"
                           "corr(W, B) = rho\n"
                           "dS = kappa*(theta - log(S))*S*dt + sigma*S*dW\n"
                           "assume S > 0\n"
                           "let L = log(S)\n"
                           "measure Q: dW = dZ - a*dt\n";

static void setup(void)
{
	out = tmpfile();
	err = tmpfile();
	ck_assert_ptr_nonnull(out);
	ck_assert_ptr_nonnull(err);
	session_options options = {.out = out, .err = err, .format = FORMAT_TEXT, .seed = 1};
	sess = session_new(&options);
	ck_assert_int_eq(session_run(sess, model, strlen(model), "model"), 0);
}

static void teardown(void)
{
	session_free(sess);
	fclose(out);
	fclose(err);
}

/* Run text; returns its status, and what it wrote to out (to be freed). */
static int run(const char *text, char **printed)
{
	fflush(out);
	long start = ftell(out);
	int status = session_run(sess, text, strlen(text), "test");
	fflush(out);
	long end = ftell(out);
	char *buf = calloc((size_t)(end - start) + 1, 1);
	fseek(out, start, SEEK_SET);
	size_t got = fread(buf, 1, (size_t)(end - start), out);
	buf[got] = '\0';
	fseek(out, 0, SEEK_END);
	if (printed)
		*printed = buf;
	else
		free(buf);
	return status;
}

/* The model as show prints it. */
static char *shown(void)
{
	char *text;
	ck_assert_int_eq(run("show", &text), 0);
	return text;
}

/* The failing statement gives the status, and show is the same before and after. */
static void leaves_model(const char *statement, int status)
{
	char *before = shown();
	ck_assert_int_eq(run(statement, NULL), status);
	char *after = shown();
	ck_assert_msg(strcmp(before, after) == 0, "'%s' changed the model:\n%s\nto\n%s", statement, before,
	              after);
	free(before);
	free(after);
}

/* expression prints as expected (after a newline) */
static void prints(const char *expression, const char *expected)
{
	char *text;
	ck_assert_int_eq(run(expression, &text), 0);
	ck_assert_str_eq(text, expected);
	free(text);
}

START_TEST(test_param_list)
{
	/* q1 is declared before the second item fails */
	leaves_model("param q1, q2 in [1, nosuch]", 2);
	ck_assert_int_eq(run("q1", NULL), 2);
	leaves_model("param q1, q2 > nosuch", 2);
	ck_assert_int_eq(run("q1", NULL), 2);
}
END_TEST

START_TEST(test_assume)
{
	leaves_model("assume a > 0, nosuch > 0", 2);
	prints("sqrt(a^2)", "abs(a)\n");
	leaves_model("assume a > 0, 1 > 2", 2); /* never holds */
	prints("sqrt(a^2)", "abs(a)\n");
	leaves_model("assume s > 0", 2); /* undeclared */
	ck_assert_int_eq(run("param s", NULL), 0);
	prints("sqrt(s^2)", "abs(s)\n");
}
END_TEST

START_TEST(test_sde)
{
	leaves_model("dV2 = kappa*V2*dt + nosuch*dt", 2);
	ck_assert_int_eq(run("V2", NULL), 2);
	/* the model stays usable: no announced name is left behind */
	prints("drift L", "drift(log(S)) = kappa*(theta - L) - 1/2*sigma^2\n");
	leaves_model("dX = X*dW*dW", 2);
	leaves_model("stratonovich dY = Y*dt + sigma*Y*dW + nosuch*dB", 2);
}
END_TEST

START_TEST(test_measure_state_corr)
{
	leaves_model("measure R: dW = dZ2 - nosuch*dt", 2);
	leaves_model("measure R: dB = dY - a*dt, dQ = dY2", 2);
	/* the inverse does not undo the new state */
	leaves_model("state x = log(S) where S = exp(2*x)", 2);
	leaves_model("state x = log(S) where S = exp(nosuch)", 2);
	leaves_model("corr(W, B) = nosuch", 2);
	leaves_model("corr(W, B) = 2", 2);
}
END_TEST

START_TEST(test_limit_mid_statement)
{
	/* z is given a sign before the bound of w hits the exponent limit (status 3);
	 * a sign left behind would make sqrt(z^2) = z */
	ck_assert_int_eq(run("param z, w", NULL), 0);
	leaves_model("assume z > 0, w > (kappa + theta)^2000000", 3);
	prints("sqrt(z^2)", "abs(z)\n");
}
END_TEST

/* Write text to a file and return its path (to be freed and removed). */
static char *file_with(const char *text)
{
	char *path = strdup("/tmp/itox-check-session-XXXXXX");
	int fd = mkstemp(path);
	ck_assert_int_ge(fd, 0);
	FILE *file = fdopen(fd, "w");
	fputs(text, file);
	fclose(file);
	return path;
}

START_TEST(test_load)
{
	/* an error at line 5: lines 1 to 4 are not applied either */
	char *path = file_with("param u > 0\nnoise V\nlet M = 2*u\nformat json\nnosuch + 1\n");
	char statement[128];
	snprintf(statement, sizeof statement, "load %s", path);
	leaves_model(statement, 2);
	ck_assert_int_eq(run("u", NULL), 2);
	prints("1 + 1", "2\n"); /* the format is text still */
	remove(path);
	free(path);
	/* a syntax error anywhere: nothing of the file runs, not even its first query */
	path = file_with("param u\nu + 1\n1 +\n)\n");
	snprintf(statement, sizeof statement, "load %s", path);
	char *before = shown(), *printed;
	ck_assert_int_eq(run(statement, &printed), 2);
	ck_assert_str_eq(printed, "");
	char *after = shown();
	ck_assert_str_eq(before, after);
	free(before);
	free(after);
	free(printed);
	remove(path);
	free(path);
}
END_TEST

START_TEST(test_forget_noise)
{
	/* forgetting the first of three noises keeps the others' correlation and
	 * SDE columns in place: qv of X with dX = X*dB + X*dC and corr(B, C) =
	 * 1/2 is X^2*(1 + 1 + 2*1/2) = 3*X^2 (the multiplication table of
	 * LANGUAGE.md; common practice, no source) */
	ck_assert_int_eq(run("noise A, C", NULL), 0);
	leaves_model("corr(W, A) = 1/2", 2);        /* after the measure Q: refused */
	ck_assert_int_eq(run("forget Q", NULL), 0); /* nothing uses a measure */
	ck_assert_int_eq(run("corr(B, C) = 1/2; dX = X*dB + X*dC", NULL), 0);
	ck_assert_int_eq(run("forget A", NULL), 0);
	prints("qv X", "qv(X) = 3*X^2\n");
	/* W is used: by the SDE of S and corr(W, B) */
	ck_assert_int_eq(run("forget W", NULL), 2);
	prints("qv S", "qv(S) = sigma^2*S^2\n");
}
END_TEST

START_TEST(test_replace_interactive)
{
	/* the REPL replaces a declaration; a failed replacement changes nothing */
	session_set_interactive(sess, true);
	ck_assert_int_eq(run("dS = 2*kappa*S*dt + sigma*S*dW", NULL), 0);
	prints("drift S", "drift(S) = 2*kappa*S\n");
	ck_assert_int_eq(run("let L = 2*log(S)", NULL), 0);
	prints("L", "2*log(S)\n");
	ck_assert_int_eq(run("param a in [0, 1]", NULL), 0);
	leaves_model("dS = kappa*S*dt + nosuch*S*dW", 2);
	leaves_model("param sigma in [-1, 1]", 2); /* wider sign: the SDE of S uses sigma */
	prints("drift S", "drift(S) = 2*kappa*S\n");
}
END_TEST

Suite *session_suite(void)
{
	Suite *suite = suite_create("session");
	TCase *tc = tcase_create("whole");
	tcase_add_checked_fixture(tc, setup, teardown);
	tcase_set_timeout(tc, 60);
	tcase_add_test(tc, test_param_list);
	tcase_add_test(tc, test_assume);
	tcase_add_test(tc, test_sde);
	tcase_add_test(tc, test_measure_state_corr);
	tcase_add_test(tc, test_limit_mid_statement);
	tcase_add_test(tc, test_load);
	tcase_add_test(tc, test_forget_noise);
	tcase_add_test(tc, test_replace_interactive);
	suite_add_tcase(suite, tc);
	return suite;
}
