/* Test-only: reading a bench measurement object (harness/io/report_json.h)
 * back, so that tests can check what cph_json_measurement wrote.  No reader
 * of the tool needs the whole object (the results reader decodes the shared
 * timing part through loader/codec.h). */
#ifndef CONVPICK_TEST_MEASUREMENT_READ_H
#define CONVPICK_TEST_MEASUREMENT_READ_H

#include <jansson.h>

#include "convpick/status.h"
#include "harness/measure/timing.h"

/* Settings, samples and the recorded fields; the statistics are recomputed
 * from the samples.  Messages "file: where.field: ..." through the loader's
 * getters (loader/json_get.h). */
cp_status cpt_json_read_measurement(const json_t *obj, const char *file, const char *where,
                                    cph_measurement *out, char *msg, size_t cap);

#endif
