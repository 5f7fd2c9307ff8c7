/* PLACEHOLDER: replaced by the real subcommand before landing. */
#include "cli.h"
int cph_cmd_run(int argc, char **argv) {
    (void)argc; (void)argv;
    cph_err("run: not built yet");
    return CPH_EXIT_USAGE;
}
