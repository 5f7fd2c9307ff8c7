/* Honest exit status for cmocka suites (see suite.h). */
#include "tests/support/suite.h"

size_t cpt_skipped;

int cpt_suite_status(int failures, size_t ntests) {
    if (failures) return failures;
    return ntests > 0 && cpt_skipped == ntests ? 77 : 0;
}
