/* PLACEHOLDER: replaced by the real subcommand before landing. */
#include "cli.h"
int cph_cmd_bench(int argc, char **argv) {
    (void)argc; (void)argv;
    cph_err("bench: not built yet");
    return CPH_EXIT_USAGE;
}
