#include "check_suites.h"
START_TEST(placeholder_expr) { ck_assert_int_eq(1, 1); }
END_TEST
Suite *expr_suite(void)
{
	Suite *suite = suite_create("expr");
	TCase *tc = tcase_create("core");
	tcase_add_test(tc, placeholder_expr);
	suite_add_tcase(suite, tc);
	return suite;
}
