/* A deploying program: loads a tuning table, asks it which algorithm to run
 * for one layer, creates the plan (weights prepared once) and runs it on
 * random data.  Links only libconvpick.
 *
 * usage: dispatch [--plugin FILE]... TABLE SPEC [no|yes] [THREADS]
 *   --plugin FILE: load a plugin's algorithms first (convpick/plugin.h); a table
 *         chosen from a plugin needs the same build of it (examples/plugin/)
 *   no|yes: flip the kernel (true convolution) or not (cross-correlation, the default)
 *   SPEC: n,c,h,w,k,r,s,stride,pad (nine integers, e.g. 1,64,56,56,64,3,3,1,1), or all
 *         sixteen cp_shape fields: n,c,h,w,k,r,s,stride_h,stride_w,pad_top,pad_left,
 *         pad_bottom,pad_right,dilation_h,dilation_w,groups
 * prints: "choice: ALGO PARAMS MATCH" then "checksum: SUM" (sum of outputs).
 *
 * Build against an installed convpick:
 *   cmake -S examples/c -B build-example -DCMAKE_PREFIX_PATH=PREFIX && cmake --build build-example
 * or, with pkg-config alone:
 *   cc -std=c17 dispatch.c -o dispatch $(PKG_CONFIG_PATH=PREFIX/lib/pkgconfig pkg-config --cflags --libs convpick) */
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <convpick/convpick.h>

/* Uniform values in [-1, 1) from a fixed seed (xorshift64*), so that runs agree. */
static void fill(float *v, size_t n, uint64_t seed) {
    uint64_t x = seed * 0x9E3779B97F4A7C15ull + 1;
    for (size_t i = 0; i < n; i++) {
        x ^= x >> 12;
        x ^= x << 25;
        x ^= x >> 27;
        uint64_t r = x * 0x2545F4914F6CDD1Dull;
        v[i] = (float)((double)(r >> 11) / 9007199254740992.0 * 2.0 - 1.0);
    }
}

int main(int argc, char **argv) {
    char msg[512];
    /* Plugins before the table: its entries may name their algorithms. */
    while (argc > 2 && strcmp(argv[1], "--plugin") == 0) {
        if (cp_plugin_load(argv[2], NULL, msg, sizeof msg) != CP_OK) {
            fprintf(stderr, "dispatch: %s\n", msg);
            return 2;
        }
        argv[2] = argv[0];
        argv += 2;
        argc -= 2;
    }
    if (argc < 3 || argc > 5) {
        fprintf(stderr, "usage: %s [--plugin FILE]... TABLE n,c,h,w,k,r,s,stride,pad [no|yes] [THREADS]\n", argv[0]);
        return 2;
    }
    long long f[16];
    int nf = 0;
    for (const char *p = argv[2]; nf < 16;) {
        char *end;
        f[nf++] = strtoll(p, &end, 10);
        if (end == p) { nf = -1; break; }
        if (*end == '\0') break;
        if (*end != ',') { nf = -1; break; }
        p = end + 1;
    }
    if (nf != 9 && nf != 16) {
        fprintf(stderr, "dispatch: layer '%s': expected 9 or 16 comma-separated integers\n", argv[2]);
        return 2;
    }
    cp_shape s = cp_shape_init();
    s.n = f[0], s.c = f[1], s.h = f[2], s.w = f[3], s.k = f[4], s.r = f[5], s.s = f[6];
    if (nf == 9) {
        s.stride_h = s.stride_w = f[7];
        s.pad_top = s.pad_left = s.pad_bottom = s.pad_right = f[8];
    } else {
        s.stride_h = f[7], s.stride_w = f[8];
        s.pad_top = f[9], s.pad_left = f[10], s.pad_bottom = f[11], s.pad_right = f[12];
        s.dil_h = f[13], s.dil_w = f[14], s.groups = f[15];
    }
    cp_flip flip = argc > 3 && strcmp(argv[3], "yes") == 0 ? CP_CONV : CP_XCORR;
    int threads = argc > 4 ? atoi(argv[4]) : 1;

    cp_table *t = NULL;
    if (cp_table_load(argv[1], 0, &t, msg, sizeof msg) != CP_OK) {
        fprintf(stderr, "dispatch: %s\n", msg);
        return 2;
    }
    if (cp_shape_validate(&s, msg, sizeof msg) != CP_SHAPE_OK) {
        fprintf(stderr, "dispatch: %s\n", msg);
        cp_table_free(t);
        return 2;
    }
    size_t nx = cp_shape_input_elems(&s), nw = cp_shape_weight_elems(&s), ny = cp_shape_output_elems(&s);
    float *x = malloc(nx * sizeof *x), *w = malloc(nw * sizeof *w), *y = malloc(ny * sizeof *y);
    int rc = 1;
    cp_plan *plan = NULL;
    cp_choice c;
    if (!x || !w || !y) {
        fprintf(stderr, "dispatch: out of memory\n");
        goto done;
    }
    fill(x, nx, 1);
    fill(w, nw, 2);
    if (cp_table_plan(t, &s, flip, threads, w, &plan, &c, msg, sizeof msg) != CP_OK) {
        fprintf(stderr, "dispatch: %s\n", msg);
        goto done;
    }
    if (cp_plan_run(plan, x, NULL, y, NULL) != CP_OK) {
        fprintf(stderr, "dispatch: %s failed to run\n", c.algo->name);
        goto done;
    }
    double sum = 0;
    for (size_t i = 0; i < ny; i++) sum += y[i];
    char params[256];
    cp_params_format(c.algo, &c.params, params, sizeof params);
    printf("choice: %s %s %s\n", c.algo->name, params[0] ? params : "-", cp_match_str(c.match));
    printf("why: %s\n", c.why);
    printf("checksum: %.6e\n", sum);
    rc = 0;
done:
    cp_plan_destroy(plan);
    free(x);
    free(w);
    free(y);
    cp_table_free(t);
    cp_plugins_unload_all(); /* after every plan and table that used them */
    return rc;
}
