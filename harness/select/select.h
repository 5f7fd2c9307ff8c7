/* Shape selection, all parts: the spec parser and the layer list at the
 * bottom, shape files and suites on top of them, and the selection a command
 * runs on.  Include the one part you need; this header is for code that uses
 * several. */
#ifndef CONVPICK_SELECT_H
#define CONVPICK_SELECT_H

#include "harness/select/layers.h"
#include "harness/select/selection.h"
#include "harness/select/shape_spec.h"
#include "harness/select/shapefile.h"
#include "harness/select/suites.h"

#endif
