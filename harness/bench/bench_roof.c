/* The bounding roof of a layer (bench_roof.h). */
#include "harness/bench/bench_roof.h"

/* A per-core figure scaled to `threads`, or the all-core figure. */
static double scaled(double one, double all, int threads, int cores) {
    return threads == cores ? all : one * threads;
}

int cph_layer_roof_of(const cph_roofs *roofs, const cp_cache_sizes *caches, const cp_shape *s,
                      int threads, cph_layer_roof *out) {
    const double elems = (double)cp_shape_input_elems(s) + (double)cp_shape_output_elems(s) +
                         (double)cp_shape_weight_elems(s) + (double)s->k;
    out->bytes = 4.0 * elems;
    /* Warm caches (bench's default): the tensors sit in the smallest level
     * whose capacity -- the L2s of the threads used, or the shared L3 --
     * holds them all. */
    const int cores = roofs->cores_used;
    if (caches->l2 && out->bytes <= (double)caches->l2 * threads && roofs->bw_l2_1core_gbs > 0) {
        out->level = "L2";
        out->gbs = scaled(roofs->bw_l2_1core_gbs, roofs->bw_l2_all_gbs, threads, cores);
    } else if (caches->l3 && out->bytes <= (double)caches->l3 && roofs->bw_l3_1core_gbs > 0) {
        out->level = "L3";
        out->gbs = scaled(roofs->bw_l3_1core_gbs, roofs->bw_l3_all_gbs, threads, cores);
    } else {
        out->level = "memory";
        out->gbs = scaled(roofs->bw_1core_gbs, roofs->bw_all_gbs, threads, cores);
    }
    out->peak_gflops = scaled(roofs->peak_1core_gflops, roofs->peak_all_gflops, threads, cores);
    if (!(out->gbs > 0) || !(out->peak_gflops > 0)) return 0;
    out->mem_s = out->bytes / (out->gbs * 1e9);
    out->fma_s = cp_shape_flops(s) / (out->peak_gflops * 1e9);
    out->bound = out->mem_s >= out->fma_s ? "memory" : "FMA";
    return 1;
}
