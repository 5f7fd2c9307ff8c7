/* Internal interface of the harness (prefix cph_).  Grows with the harness. */
#ifndef CONVPICK_CPH_H
#define CONVPICK_CPH_H

#include "convpick/convpick.h"

#endif
