/* convpick lookup: asks a tuning table which algorithm a deploying program
 * would run for one layer, and says how the answer was found (exact entry,
 * nearest compatible entry, or the default). */
#include <jansson.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>

#include "harness/cli/cli.h"
#include "harness/cli/options.h"
#include "convpick/convpick.h"
#include "harness/select/shape_spec.h"

static void usage(FILE *f) {
    fputs("usage: convpick lookup TABLE|BUNDLE --shape SPEC [OPTIONS]\n\n"
          "Prints the algorithm and parameters the table gives for the layer SPEC\n"
          "(e.g. n=1,c=64,h=56,w=56,k=64,r=3,s=3,pad=1) and whether the answer is\n"
          "exact, approximate (nearest compatible entry) or the default.  Given a BUNDLE\n"
          "(a directory of tables for several machines, or one bundle file written by\n"
          "convpick pack), it first picks the table for\n"
          "this machine (exact fingerprint, else the nearest by ISA features, cache sizes\n"
          "and CPU count; docs/table-format.md) and says which and why.\n\n"
          "the layer:\n"
          "  --shape SPEC        the layer (key=value list, see convpick verify --help;\n"
          "                      required)\n"
          "  --flip F            the kernel orientation: no (cross-correlation, what a\n"
          "                      network layer computes) or yes (true convolution, the\n"
          "                      kernel read flipped) (default: no)\n\n"
          "options:\n"
          "  --threads N         thread count to look up (default: any, fewest recorded)\n"
          "  --max-rel-err X     answer with the fastest candidate the exact entry\n"
          "                      recorded with an error against the oracle <= X\n"
          "                      (default: the table's choice, within tune's bound)\n"
          "  --strict-device     refuse a table made on another device (default: accept)\n"
          "  --json              print one JSON object instead of text (default: text)\n",
          f);
    cph_help_plugin(f);
    cph_help_end(f, "0 answered, 1 no exact entry or no candidate within --max-rel-err, or "
                    "the answer could not be printed, 2 bad usage or input");
}

static void print_text(const cp_table *t, const cp_choice *c, const char *bundle_why) {
    char params[256];
    if (bundle_why) printf("table:     %s\n", bundle_why);
    cp_params_format(c->algo, &c->params, params, sizeof params);
    printf("algorithm: %s\n", c->algo->name);
    printf("params:    %s\n", params[0] ? params : "(none)");
    printf("match:     %s\n", cp_match_str(c->match));
    if (c->entry) printf("entry:     %s (%d thread(s))\n", c->entry->name, c->entry->threads);
    if (isfinite(c->max_rel_err))
        printf("bound:     rel_err <= %.3g (the answer's recorded rel_err %.3g)\n",
               c->max_rel_err, c->rel_err);
    printf("why:       %s\n", c->why);
    if (t && !cp_table_device_matches(t))
        printf("note:      the table was made on another device (fingerprint %s)\n",
               cp_table_fingerprint(t));
}

static int print_json(const cp_table *t, const cp_choice *c, const char *bundle_why) {
    json_t *params = json_object();
    for (int i = 0; i < c->algo->nparams; i++)
        json_object_set_new(params, c->algo->params[i].name, json_integer((json_int_t)c->params.v[i]));
    json_t *o = json_pack("{s:s, s:o, s:s, s:o, s:i, s:s, s:b}", "algo", c->algo->name, "params",
                          params, "match", cp_match_str(c->match), "entry",
                          c->entry ? json_string(c->entry->name) : json_null(), "threads",
                          c->entry ? c->entry->threads : 0, "why", c->why, "device_matches",
                          t ? cp_table_device_matches(t) : 0);
    if (!o) return 1;
    json_object_set_new(o, "max_rel_err",
                        isfinite(c->max_rel_err) ? json_real(c->max_rel_err) : json_null());
    json_object_set_new(o, "rel_err", isfinite(c->rel_err) ? json_real(c->rel_err) : json_null());
    if (bundle_why) json_object_set_new(o, "bundle", json_string(bundle_why));
    char *s = json_dumps(o, JSON_COMPACT);
    json_decref(o);
    if (!s) return 1;
    puts(s);
    free(s);
    return 0;
}

typedef struct lookup_opts {
    const char *spec, *path;
    cp_flip flip;
    int threads, json;
    unsigned flags;
    double max_rel_err; /* INFINITY: no bound asked */
} lookup_opts;

/* Returns -1 to go on, else the exit code (the error already reported). */
static int parse(int argc, char **argv, lookup_opts *o) {
    enum { OPT_THREADS = 1, OPT_STRICT, OPT_JSON, OPT_MAXERR };
    static const struct option longopts[] = {
        {"shape", required_argument, NULL, CPH_OPT_SHAPE},
        {"flip", required_argument, NULL, CPH_OPT_FLIP},
        {"threads", required_argument, NULL, OPT_THREADS},
        {"strict-device", no_argument, NULL, OPT_STRICT},
        {"json", no_argument, NULL, OPT_JSON},
        {"max-rel-err", required_argument, NULL, OPT_MAXERR},
        CPH_OPT_PLUGIN_ENTRY,
        CPH_OPTS_HELP_END,
    };
    int opt, nflip;
    long long v;
    while ((opt = cph_opt_next("lookup", argc, argv, longopts)) != -1) {
        switch (opt) {
        case CPH_OPT_SHAPE: o->spec = optarg; break;
        case CPH_OPT_FLIP:
            if (cph_opt_flip("lookup", optarg, 0, &o->flip, &nflip)) return CPH_EXIT_USAGE;
            break;
        case OPT_THREADS:
            if (cph_opt_int("lookup", "--threads", optarg, 1, 65536, "an integer in [1, 65536]",
                            &v))
                return CPH_EXIT_USAGE;
            o->threads = (int)v;
            break;
        case OPT_STRICT: o->flags |= CP_TABLE_STRICT_DEVICE; break;
        case OPT_JSON: o->json = 1; break;
        case OPT_MAXERR: {
            const int rc = cph_opt_double("lookup", "--max-rel-err", optarg, 0.0, 1e300,
                                          "a number >= 0", &o->max_rel_err);
            if (rc) return rc;
            break;
        }
        case CPH_OPT_PLUGIN:
            if (cph_opt_plugin("lookup", optarg)) return CPH_EXIT_USAGE;
            break;
        case 'h': usage(stdout); return CPH_EXIT_OK;
        default: return CPH_EXIT_USAGE;
        }
    }
    if (optind != argc - 1)
        return cph_opt_error("lookup", NULL,
                             "expected one TABLE, got %d (see convpick lookup --help)",
                             argc - optind);
    if (!o->spec)
        return cph_opt_error("lookup", "--shape", "required (see convpick lookup --help)");
    o->path = argv[optind];
    return -1;
}

/* Loads the table and answers; the exit code. */
static int lookup(const lookup_opts *o) {
    char msg[512];
    cp_shape shape;
    if (cph_parse_shape(o->spec, NULL, &shape, msg, sizeof msg) != CP_OK)
        return cph_opt_error("lookup", "--shape", "'%s': %s", o->spec, msg);
    cp_table *t = NULL;
    const int is_bundle = cp_bundle_is(o->path); /* a directory or a bundle file */
    cp_bundle_pick pick;
    pick.kind = CP_PICK_EXACT;
    cp_status st = is_bundle ? cp_bundle_load(o->path, o->flags, &t, &pick, msg, sizeof msg)
                             : cp_table_load(o->path, o->flags, &t, msg, sizeof msg);
    if (st != CP_OK && !(is_bundle && pick.kind == CP_PICK_NONE)) {
        cph_err("%s", msg);
        return CPH_EXIT_USAGE;
    }
    const char *bundle_why = is_bundle ? pick.why : NULL;
    cp_choice c;
    int rc = CPH_EXIT_OK;
    const cp_status lst =
        isfinite(o->max_rel_err)
            ? cp_table_lookup_bounded(t, &shape, o->flip, o->threads, o->max_rel_err, &c, msg,
                                      sizeof msg)
            : cp_table_lookup(t, &shape, o->flip, o->threads, &c, msg, sizeof msg);
    if (lst == CP_ENOTFOUND) {
        cph_err("lookup: %s", msg);
        rc = CPH_EXIT_FAIL;
    } else if (lst != CP_OK) {
        cph_err("lookup: %s", msg);
        rc = CPH_EXIT_USAGE;
    } else if (o->json) {
        if (print_json(t, &c, bundle_why) != 0) {
            cph_err("lookup: cannot format the answer as JSON");
            rc = CPH_EXIT_FAIL;
        }
    } else {
        print_text(t, &c, bundle_why);
    }
    cp_table_free(t);
    return rc;
}

int cph_cmd_lookup(int argc, char **argv) {
    lookup_opts o = {NULL, NULL, CP_XCORR, 0, 0, 0, INFINITY};
    const int rc = parse(argc, argv, &o);
    return rc >= 0 ? rc : lookup(&o);
}
