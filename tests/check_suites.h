/* check_suites.h - the Check suites of the unit-test program. */
#ifndef ITOX_CHECK_SUITES_H
#define ITOX_CHECK_SUITES_H

#include <check.h>

Suite *rat_suite(void);
Suite *expr_suite(void);
Suite *diff_suite(void);
Suite *print_suite(void);
Suite *grammar_suite(void);
Suite *props_suite(void);
Suite *sim_suite(void);
Suite *ball_suite(void);
Suite *ratform_suite(void);
Suite *rules_suite(void);
Suite *session_suite(void);

#endif
