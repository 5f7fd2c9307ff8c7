/* An example plugin: "pointwise_rows", a conv2d specialised for 1x1 kernels
 * at stride 1 without padding (the pointwise layers of MobileNet-style
 * networks).  Such a layer is a matrix product Y[k, p] = b[k] + sum_c W[k, c]
 * X[c, p] over the H*W pixels p; this kernel computes it as row updates,
 * y_row(k) += W[k, c] * x_row(c), over blocks of hw_block pixels so that the
 * output block stays in L1 while every input channel streams past it.
 *
 * It is built against the installed convpick headers only (it links nothing
 * of convpick) and keeps the contract of <convpick/algo.h>; the entry point
 * of <convpick/plugin.h> hands it to convpick:
 *
 *   cc -std=c17 -O3 -shared -fPIC $(pkg-config --cflags convpick) pointwise.c -o pointwise.so
 *   convpick verify --plugin ./pointwise.so --algo pointwise_rows --suite mobilenet_v1
 *   convpick tune --plugin ./pointwise.so --suite mobilenet_v1 --out t.json
 *
 * Compare your own kernel the same way: copy this file, change run(). */
#include <string.h>

#include <convpick/plugin.h>

static int pw_supports(const cp_shape *s, cp_flip flip, char *why, size_t cap) {
    (void)flip; /* a 1x1 kernel read flipped is the same kernel */
    const char *no = s->r != 1 || s->s != 1                      ? "not a 1x1 kernel"
                     : s->stride_h != 1 || s->stride_w != 1      ? "stride is not 1"
                     : s->pad_top || s->pad_left || s->pad_bottom || s->pad_right ? "padded"
                     : s->groups != 1                            ? "grouped"
                                                                 : NULL;
    if (no && why && cap) {
        strncpy(why, no, cap - 1);
        why[cap - 1] = '\0';
    }
    return no == NULL;
}

static const cp_param_desc pw_params[] = {
    {"hw_block", "pixels per output block (default: what fits half of L1, at most H*W)", 16,
     1 << 20},
};

static int64_t pw_default_block(const cp_shape *s, const cp_cache_sizes *caches) {
    int64_t b = (int64_t)(caches->l1d / 2 / sizeof(float));
    const int64_t hw = s->h * s->w;
    if (b > hw) b = hw;
    return b < 16 ? 16 : b;
}

static void pw_defaults(const cp_shape *s, const cp_cache_sizes *caches, cp_params *out) {
    memset(out, 0, sizeof *out);
    out->v[0] = pw_default_block(s, caches);
}

static int pw_candidates(const cp_shape *s, const cp_cache_sizes *caches, cp_params *out, int max) {
    const int64_t sizes[] = {pw_default_block(s, caches), 64, 256, 1024, 4096};
    int n = 0;
    for (size_t i = 0; i < sizeof sizes / sizeof sizes[0] && n < max; i++) {
        memset(&out[n], 0, sizeof out[n]);
        out[n++].v[0] = sizes[i];
    }
    return n;
}

static size_t pw_workspace(const cp_shape *s, cp_flip flip, const cp_params *p, int nthreads) {
    (void)s, (void)flip, (void)p, (void)nthreads;
    return 0;
}

typedef struct {
    const cp_run_args *a;
    int64_t img; /* batch index */
} pw_task;

/* Output channels [k0, k1) of one image. */
static void pw_rows(void *arg, int64_t k0, int64_t k1, int worker) {
    (void)worker;
    const pw_task *t = arg;
    const cp_shape *s = t->a->shape;
    const int64_t hw = s->h * s->w, blk = t->a->params->v[0];
    const float *x = t->a->x + t->img * s->c * hw;
    const float *wt = t->a->weights;
    float *y = t->a->y + t->img * s->k * hw;
    for (int64_t p0 = 0; p0 < hw; p0 += blk) {
        const int64_t p1 = p0 + blk < hw ? p0 + blk : hw;
        for (int64_t k = k0; k < k1; k++) {
            float *yr = y + k * hw;
            const float b = t->a->bias ? t->a->bias[k] : 0.0f;
            for (int64_t p = p0; p < p1; p++) yr[p] = b;
            for (int64_t c = 0; c < s->c; c++) {
                const float w = wt[k * s->c + c];
                const float *xr = x + c * hw;
                for (int64_t p = p0; p < p1; p++) yr[p] += w * xr[p];
            }
        }
    }
}

static cp_status pw_run(const cp_run_args *a) {
    for (int64_t n = 0; n < a->shape->n; n++) {
        pw_task t = {a, n};
        if (a->exec && a->exec->parallel_for)
            a->exec->parallel_for(a->exec->pool, a->shape->k, pw_rows, &t);
        else
            pw_rows(&t, 0, a->shape->k, 0);
    }
    return CP_OK;
}

static const cp_algo pointwise_rows = {
    .name = "pointwise_rows",
    .summary = "example plugin: 1x1 stride-1 layers as row updates over pixel blocks",
    .tolerance = 1e-5,
    .nparams = 1,
    .params = pw_params,
    .supports = pw_supports,
    .defaults = pw_defaults,
    .candidates = pw_candidates,
    .workspace_size = pw_workspace,
    .run = pw_run,
};

static const cp_algo *const algos[] = {&pointwise_rows};
static const cp_plugin_info info = {CP_PLUGIN_ABI_VERSION, "pointwise_example", 1, algos};

/* The one symbol convpick looks for. */
const cp_plugin_info *convpick_plugin_entry(void);
const cp_plugin_info *convpick_plugin_entry(void) { return &info; }
