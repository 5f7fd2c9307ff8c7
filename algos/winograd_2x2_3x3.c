/* PLACEHOLDER: replaced by the real implementation before landing. */
#include "cpa.h"
static int ph_supports(const cp_shape *s, cp_mode m, char *why, size_t cap) { (void)s; (void)m; return cpa_refuse(why, cap, "not built yet"); }
static cp_status ph_run(const cp_run_args *a) { (void)a; return CP_EUNSUPPORTED; }
const cp_algo cpa_winograd_2x2_3x3 = { .name = "winograd_2x2_3x3", .summary = "placeholder", .tolerance = 1e-5, .supports = ph_supports, .run = ph_run };
