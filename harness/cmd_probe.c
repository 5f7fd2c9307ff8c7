/* PLACEHOLDER: replaced by the real subcommand before landing. */
#include "cli.h"
int cph_cmd_probe(int argc, char **argv) {
    (void)argc; (void)argv;
    cph_err("probe: not built yet");
    return CPH_EXIT_USAGE;
}
