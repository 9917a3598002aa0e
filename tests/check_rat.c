#include "check_suites.h"
START_TEST(placeholder_rat) { ck_assert_int_eq(1, 1); }
END_TEST
Suite *rat_suite(void)
{
	Suite *suite = suite_create("rat");
	TCase *tc = tcase_create("core");
	tcase_add_test(tc, placeholder_rat);
	suite_add_tcase(suite, tc);
	return suite;
}
