/* convpick lookup: asks a tuning table which algorithm a deploying program
 * would run for one layer, and says how the answer was found (exact entry,
 * nearest compatible entry, or the default). */
#include <getopt.h>
#include <jansson.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "harness/cli/cli.h"
#include "convpick/convpick.h"
#include "harness/select/select.h"

static const char help[] =
    "usage: convpick lookup TABLE --shape SPEC [--mode xcorr|conv] [--threads N]\n"
    "                       [--strict-device] [--json]\n\n"
    "Prints the algorithm and parameters the table gives for the layer SPEC\n"
    "(e.g. n=1,c=64,h=56,w=56,k=64,r=3,s=3,pad=1) and whether the answer is\n"
    "exact, approximate (nearest compatible entry) or the default.\n\n"
    "  --shape SPEC      the layer (key=value list, see convpick verify --help)\n"
    "  --mode M          xcorr (default) or conv\n"
    "  --threads N       thread count to look up (default: any, fewest recorded)\n"
    "  --strict-device   refuse a table made on another device\n"
    "  --json            print one JSON object instead of text\n";

static void print_text(const cp_table *t, const cp_choice *c) {
    char params[256];
    cp_params_format(c->algo, &c->params, params, sizeof params);
    printf("algorithm: %s\n", c->algo->name);
    printf("params:    %s\n", params[0] ? params : "(none)");
    printf("match:     %s\n", cp_match_str(c->match));
    if (c->entry) printf("entry:     %s (%d thread(s))\n", c->entry->name, c->entry->threads);
    printf("why:       %s\n", c->why);
    if (!cp_table_device_matches(t))
        printf("note:      the table was made on another device (fingerprint %s)\n",
               cp_table_fingerprint(t));
}

static int print_json(const cp_table *t, const cp_choice *c) {
    json_t *params = json_object();
    for (int i = 0; i < c->algo->nparams; i++)
        json_object_set_new(params, c->algo->params[i].name, json_integer((json_int_t)c->params.v[i]));
    json_t *o = json_pack("{s:s, s:o, s:s, s:o, s:i, s:s, s:b}", "algo", c->algo->name, "params",
                          params, "match", cp_match_str(c->match), "entry",
                          c->entry ? json_string(c->entry->name) : json_null(), "threads",
                          c->entry ? c->entry->threads : 0, "why", c->why, "device_matches",
                          cp_table_device_matches(t));
    if (!o) return 1;
    char *s = json_dumps(o, JSON_COMPACT);
    json_decref(o);
    if (!s) return 1;
    puts(s);
    free(s);
    return 0;
}

int cph_cmd_lookup(int argc, char **argv) {
    static const struct option longopts[] = {
        {"shape", required_argument, NULL, 's'},  {"mode", required_argument, NULL, 'm'},
        {"threads", required_argument, NULL, 't'}, {"strict-device", no_argument, NULL, 'd'},
        {"json", no_argument, NULL, 'j'},          {"help", no_argument, NULL, 'h'},
        {NULL, 0, NULL, 0},
    };
    const char *spec = NULL;
    cp_flip flip = CP_XCORR;
    int threads = 0, json = 0;
    unsigned flags = 0;
    int opt;
    while ((opt = getopt_long(argc, argv, "", longopts, NULL)) != -1) {
        switch (opt) {
        case 's': spec = optarg; break;
        case 'm':
            if (strcmp(optarg, "xcorr") == 0)
                flip = CP_XCORR;
            else if (strcmp(optarg, "conv") == 0)
                flip = CP_CONV;
            else {
                cph_err("lookup: --mode: '%s' (expected xcorr or conv)", optarg);
                return CPH_EXIT_USAGE;
            }
            break;
        case 't': {
            char *end;
            long v = strtol(optarg, &end, 10);
            if (*end || end == optarg || v < 1 || v > 65536) {
                cph_err("lookup: --threads: '%s' (expected an integer in [1, 65536])", optarg);
                return CPH_EXIT_USAGE;
            }
            threads = (int)v;
            break;
        }
        case 'd': flags |= CP_TABLE_STRICT_DEVICE; break;
        case 'j': json = 1; break;
        case 'h': fputs(help, stdout); return CPH_EXIT_OK;
        default: return cph_usage_error("lookup");
        }
    }
    if (optind != argc - 1 || !spec) {
        cph_err("lookup: expected one TABLE and --shape SPEC (see convpick lookup --help)");
        return CPH_EXIT_USAGE;
    }
    const char *path = argv[optind];
    char msg[512];
    cp_shape shape;
    if (cph_parse_shape(spec, "--shape", &shape, msg, sizeof msg) != CP_OK) {
        cph_err("lookup: %s", msg);
        return CPH_EXIT_USAGE;
    }
    cp_table *t;
    if (cp_table_load(path, flags, &t, msg, sizeof msg) != CP_OK) {
        cph_err("%s", msg);
        return CPH_EXIT_USAGE;
    }
    cp_choice c;
    cp_status st = cp_table_lookup(t, &shape, flip, threads, &c, msg, sizeof msg);
    if (st != CP_OK) {
        cph_err("lookup: %s", msg);
        cp_table_free(t);
        return CPH_EXIT_USAGE;
    }
    int rc = CPH_EXIT_OK;
    if (json) {
        if (print_json(t, &c) != 0) {
            cph_err("lookup: cannot format the answer as JSON");
            rc = CPH_EXIT_FAIL;
        }
    } else {
        print_text(t, &c);
    }
    cp_table_free(t);
    return rc;
}
