/* convpick probe: what the tuner knows of this machine - topology, caches,
 * ISA, BLAS, build, fingerprint - and the roofs measured on the spot. */
#include <jansson.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "harness/cli/cli.h"
#include "harness/cli/options.h"
#include "harness/machine/machine.h"

static void usage(FILE *f) {
    fputs("usage: convpick probe [OPTIONS]\n\n"
          "Describes this machine (topology and caches from hwloc, ISA from cpuid, the BLAS\n"
          "library, the compiler and flags of this build, the device fingerprint) and measures\n"
          "its roofs: FP32 FMA peak at every vector width the CPU and the OS support (the widest\n"
          "is the device roof, what every % of peak is against) and triad bandwidth, on one\n"
          "core and on all physical cores.\n"
          "Bandwidth is counted as STREAM counts the triad a = b + s*c: 12 bytes per float\n"
          "element, the write-allocate read of a not counted.\n\n"
          "options:\n"
          "  --json              print one JSON object instead of text (default: text)\n"
          "  --no-roofs          describe only, measure nothing (default: measure)\n"
          "  --seconds S         time budget for the roofs (default: 2)\n"
          "  --synthetic DESC    describe an invented machine given in hwloc's synthetic\n"
          "                      syntax, e.g. \"pack:2 l3:1(size=32MiB) l2:8(size=1MiB)\n"
          "                      l1d:1(size=32KiB) core:1 pu:2\" (no roofs: nothing to measure;\n"
          "                      default: this machine)\n",
          f);
    cph_help_end(f, "0 done, 1 the roofs could not be measured, 2 bad usage or input");
}

static void print_size(char *buf, size_t cap, double bytes) {
    static const char *unit[] = {"B", "KiB", "MiB", "GiB", "TiB"};
    int u = 0;
    while (bytes >= 1024.0 && u < 4) {
        bytes /= 1024.0;
        u++;
    }
    if (bytes == floor(bytes)) snprintf(buf, cap, "%.0f %s", bytes, unit[u]);
    else snprintf(buf, cap, "%.1f %s", bytes, unit[u]);
}

static const char *plural(int n, const char *one, const char *many) { return n == 1 ? one : many; }

/* One line per vector width, widest (the device roof) first, then the ratio. */
static void print_peaks(const cph_roofs *r) {
    for (int i = 0; i < r->nwidths; i++) {
        const cph_roof_width *w = &r->widths[i];
        char name[32];
        if (w->bits) snprintf(name, sizeof name, "%d-bit FMA", w->bits);
        else snprintf(name, sizeof name, "portable loop");
        printf("%-12s %-13s %.1f GFLOP/s on 1 core, %.1f GFLOP/s on %d %s (%s)%s\n",
               i ? "" : "peak FP32", name, w->peak_1core_gflops, w->peak_all_gflops,
               r->cores_used, plural(r->cores_used, "core", "cores"), w->isa,
               i ? "" : ", the device roof (every % of peak)");
    }
    if (r->ratio_512_256 > 0)
        printf("             512/256-bit ratio %.2f (%s)\n", r->ratio_512_256,
               r->ratio_512_256 > 1.5 ? "full-width 512-bit FMA units"
                                      : "512-bit operations run at about the 256-bit rate");
    else
        printf("             widest vector width: %d bits (%s)\n", r->roof_bits ? r->roof_bits : 32,
               r->roof_bits == 256 ? "no AVX-512 in the CPU or the OS"
                                   : "no AVX2 FMA in the CPU or the OS");
}

static void print_text(const cph_machine *m, const cph_roofs *r) {
    char sz[32];
    printf("cpu          %s\n", m->model[0] ? m->model : "(no brand string)");
    printf("             %s, family %d, model %d, stepping %d\n", m->vendor, m->family,
           m->model_id, m->stepping);
    print_size(sz, sizeof sz, (double)m->memory_bytes);
    printf("topology     %d %s, %d NUMA %s, %d physical %s, %d %s, %s memory%s\n", m->packages,
           plural(m->packages, "package", "packages"), m->numa_nodes,
           plural(m->numa_nodes, "node", "nodes"), m->cores, plural(m->cores, "core", "cores"),
           m->pus, plural(m->pus, "PU", "PUs"), sz, m->synthetic ? " (synthetic)" : "");
    for (int i = 0; i < m->ncaches; i++) {
        const cph_cache_level *c = &m->caches[i];
        char assoc[24];
        if (c->assoc > 0) snprintf(assoc, sizeof assoc, "%d-way", c->assoc);
        else snprintf(assoc, sizeof assoc, "%s", c->assoc < 0 ? "fully assoc." : "ways unknown");
        print_size(sz, sizeof sz, (double)c->size);
        printf("%-12s L%d %-7s %8s, %zu B lines, %s, %d %s, %d %s each\n", i ? "" : "caches",
               c->level, c->kind, sz, c->line, assoc, c->instances,
               plural(c->instances, "instance", "instances"), c->cores_sharing,
               plural(c->cores_sharing, "core", "cores"));
    }
    const cp_cache_sizes cs = cph_machine_caches(m);
    printf("for algos    l1d %zu, l2 %zu, l3 %zu, line %zu bytes\n", cs.l1d, cs.l2, cs.l3, cs.line);
    printf("isa         ");
    const struct {
        const char *name;
        int on;
    } isa[] = {{"sse4.2", m->sse42},          {"avx", m->avx},           {"avx2", m->avx2},
               {"fma", m->fma},               {"avx512f", m->avx512f},   {"avx512bw", m->avx512bw},
               {"avx512vl", m->avx512vl},     {"avx512dq", m->avx512dq},
               {"avx512_vnni", m->avx512_vnni}, {"avx512_bf16", m->avx512_bf16}};
    int any = 0;
    for (size_t i = 0; i < sizeof isa / sizeof isa[0]; i++)
        if (isa[i].on) {
            printf(" %s", isa[i].name);
            any = 1;
        }
    printf("%s\n", any ? "" : " (none of those convpick checks)");
    printf("blas         %s (core %s)\n", m->blas_version, m->blas_core);
    printf("build        %s, flags %s\n", m->compiler, m->build_flags[0] ? m->build_flags : "(none)");
    printf("fingerprint  %s\n", m->fingerprint);
    if (!r) return;
    print_peaks(r);
    printf("bandwidth    %.1f GB/s on 1 core, %.1f GB/s on %d %s (triad, 3 x ", r->bw_1core_gbs,
           r->bw_all_gbs, r->cores_used, plural(r->cores_used, "core", "cores"));
    print_size(sz, sizeof sz, (double)r->triad_bytes);
    printf("%s arrays)\n", sz);
    if (r->bw_l2_1core_gbs > 0)
        printf("             L2 %.1f GB/s on 1 core, %.1f GB/s on %d %s; L3 %.1f / %.1f GB/s "
               "(triad on arrays sized for the level)\n",
               r->bw_l2_1core_gbs, r->bw_l2_all_gbs, r->cores_used,
               plural(r->cores_used, "core", "cores"), r->bw_l3_1core_gbs, r->bw_l3_all_gbs);
    printf("ridge        %.2f FLOP/byte on 1 core, %.2f FLOP/byte on %d %s\n", r->ridge_1core,
           r->ridge_all, r->cores_used, plural(r->cores_used, "core", "cores"));
    printf("             measured in %.0f ms, threads %s\n", 1e3 * r->seconds_spent,
           r->pinned ? "pinned one per core" : "not pinned");
}

typedef struct probe_opts {
    int json, roofs;
    double seconds;
    const char *synthetic;
} probe_opts;

/* Returns -1 to go on, else the exit code (the error already reported). */
static int parse(int argc, char **argv, probe_opts *o) {
    enum { OPT_JSON = 1, OPT_NOROOFS, OPT_SECONDS, OPT_SYNTHETIC };
    static const struct option longopts[] = {
        {"json", no_argument, NULL, OPT_JSON},
        {"no-roofs", no_argument, NULL, OPT_NOROOFS},
        {"seconds", required_argument, NULL, OPT_SECONDS},
        {"synthetic", required_argument, NULL, OPT_SYNTHETIC},
        CPH_OPTS_HELP_END,
    };
    int opt;
    while ((opt = cph_opt_next("probe", argc, argv, longopts)) != -1) {
        switch (opt) {
        case OPT_JSON: o->json = 1; break;
        case OPT_NOROOFS: o->roofs = 0; break;
        case OPT_SECONDS:
            if (cph_opt_double("probe", "--seconds", optarg, 1e-6, 600.0,
                               "a number of seconds in (0, 600]", &o->seconds))
                return CPH_EXIT_USAGE;
            break;
        case OPT_SYNTHETIC: o->synthetic = optarg; break;
        case 'h': usage(stdout); return CPH_EXIT_OK;
        default: return CPH_EXIT_USAGE;
        }
    }
    return cph_opt_no_operands("probe", argc, argv) ? CPH_EXIT_USAGE : -1;
}

/* Describes the machine (and measures it); the exit code. */
static int probe(const probe_opts *o) {
    char msg[512];
    cph_machine m;
    cp_status st = cph_machine_detect(&m, o->synthetic, msg, sizeof msg);
    if (st != CP_OK) {
        cph_err("probe: %s", msg);
        return CPH_EXIT_USAGE;
    }
    cph_roofs r;
    int have_roofs = 0;
    if (o->roofs && !m.synthetic) {
        st = cph_roofs_measure(&m, o->seconds, &r, msg, sizeof msg);
        if (st != CP_OK) {
            cph_err("probe: %s", msg);
            cph_machine_free(&m);
            return CPH_EXIT_FAIL;
        }
        if (msg[0]) cph_warn("probe: %s", msg);
        have_roofs = 1;
    }
    int rc = CPH_EXIT_OK;
    if (o->json) {
        json_t *j = cph_machine_to_json(&m, have_roofs ? &r : NULL);
        char *text = j ? json_dumps(j, JSON_INDENT(2) | JSON_PRESERVE_ORDER) : NULL;
        if (text) {
            printf("%s\n", text);
            free(text);
        } else {
            cph_err("probe: cannot build the JSON description");
            rc = CPH_EXIT_FAIL;
        }
        json_decref(j);
    } else {
        print_text(&m, have_roofs ? &r : NULL);
    }
    cph_machine_free(&m);
    return rc;
}

int cph_cmd_probe(int argc, char **argv) {
    probe_opts o = {0, 1, 2.0, NULL};
    const int rc = parse(argc, argv, &o);
    return rc >= 0 ? rc : probe(&o);
}
