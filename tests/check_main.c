/* check_main.c - runs every unit suite; Check prints its summary line. */
#include <stdlib.h>

#include "check_suites.h"

int main(void)
{
	SRunner *runner = srunner_create(rat_suite());
	srunner_add_suite(runner, expr_suite());
	srunner_add_suite(runner, diff_suite());
	srunner_add_suite(runner, print_suite());
	srunner_add_suite(runner, grammar_suite());
	srunner_add_suite(runner, props_suite());
	srunner_add_suite(runner, sim_suite());
	srunner_add_suite(runner, ball_suite());
	srunner_add_suite(runner, ratform_suite());
	srunner_add_suite(runner, rules_suite());
	srunner_add_suite(runner, session_suite());
	srunner_run_all(runner, CK_NORMAL);
	int failed = srunner_ntests_failed(runner);
	srunner_free(runner);
	return failed == 0 ? EXIT_SUCCESS : EXIT_FAILURE;
}
