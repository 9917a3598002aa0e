#include "check_suites.h"
START_TEST(placeholder_props) { ck_assert_int_eq(1, 1); }
END_TEST
Suite *props_suite(void)
{
	Suite *suite = suite_create("props");
	TCase *tc = tcase_create("core");
	tcase_add_test(tc, placeholder_props);
	suite_add_tcase(suite, tc);
	return suite;
}
