#include "check_suites.h"
START_TEST(placeholder_diff) { ck_assert_int_eq(1, 1); }
END_TEST
Suite *diff_suite(void)
{
	Suite *suite = suite_create("diff");
	TCase *tc = tcase_create("core");
	tcase_add_test(tc, placeholder_diff);
	suite_add_tcase(suite, tc);
	return suite;
}
