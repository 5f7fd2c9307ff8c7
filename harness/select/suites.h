/* Built-in suites: the convolution layers of published networks (resnet50,
 * vgg16, mobilenet_v1) and of our invented demo network, batch 1. */
#ifndef CONVPICK_SUITES_H
#define CONVPICK_SUITES_H

#include <stddef.h>

#include "harness/select/layers.h"

size_t cph_suite_count(void);
const char *cph_suite_name(size_t i);
const char *cph_suite_source(const char *name); /* citation of the network's paper */
/* Appends the suite's layers to out (CP_ENOTFOUND for an unknown name). */
cp_status cph_suite_load(const char *name, cph_layer_list *out, char *msg, size_t cap);

#endif
