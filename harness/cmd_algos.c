/* PLACEHOLDER: replaced by the real subcommand before landing. */
#include "cli.h"
int cph_cmd_algos(int argc, char **argv) {
    (void)argc; (void)argv;
    cph_err("algos: not built yet");
    return CPH_EXIT_USAGE;
}
