/* Shared tail of every Check unit-test executable: run the suite, exit status from its failures.
 * SPDX-License-Identifier: MIT
 */
#ifndef ML_TESTS_ML_CHECK_H
#define ML_TESTS_ML_CHECK_H

#include <check.h>
#include <stdlib.h>

static inline int ml_check_run(Suite *s)
{
    SRunner *sr = srunner_create(s);
    srunner_run_all(sr, CK_NORMAL);
    const int failed = srunner_ntests_failed(sr);
    srunner_free(sr);
    return failed == 0 ? EXIT_SUCCESS : EXIT_FAILURE;
}

#endif
