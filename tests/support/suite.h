/* Honest exit status for cmocka suites.  cmocka's exit status counts failed
 * tests only, so a suite whose every test called skip() exits 0 and CTest
 * reports a pass that never happened.  A suite that may skip calls
 * cpt_skip() instead of skip() and returns cpt_suite_status(): 77 (CTest's
 * SKIP_RETURN_CODE for these suites) when every test skipped and none
 * failed; otherwise cmocka's own status.  Include after <cmocka.h>. */
#ifndef CPT_SUITE_H
#define CPT_SUITE_H

#include <stddef.h>

/* Tests that called cpt_skip() in this process. */
extern size_t cpt_skipped;

#define cpt_skip()         \
    do {                   \
        cpt_skipped++;     \
        skip();            \
    } while (0)

/* failures: cmocka_run_group_tests()'s result; ntests: the suite's size. */
int cpt_suite_status(int failures, size_t ntests);

#endif
