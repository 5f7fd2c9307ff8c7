/* convpick: interchangeable conv2d algorithms, one fp64 oracle, and the tuning
 * table that tells a deploying program which algorithm to run per layer.
 *
 * Include this one header.  The parts:
 *   convpick/status.h  status codes
 *   convpick/shape.h   layer shapes, output size, FLOPs, validation, padding modes
 *   convpick/exec.h    how algorithms run in parallel without owning threads
 *   convpick/algo.h    the algorithm interface, the registry, plans
 *   convpick/oracle.h  the fp64 reference and the error measure
 *   convpick/table.h   tuning tables: load, look up, dispatch */
#ifndef CONVPICK_H
#define CONVPICK_H

#include "convpick/status.h"
#include "convpick/shape.h"
#include "convpick/exec.h"
#include "convpick/algo.h"
#include "convpick/oracle.h"
#include "convpick/table.h"
#include "convpick/plugin.h"
#include "convpick/bundle.h"

#define CONVPICK_VERSION_MAJOR 0
#define CONVPICK_VERSION_MINOR 1
#define CONVPICK_VERSION_PATCH 0
#define CONVPICK_VERSION "0.1.0"

#endif
