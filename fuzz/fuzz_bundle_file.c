/* Fuzz target: the bundle-file reader (cp_bundle_open on a file;
 * loader/bundle_file.c) and loading each table it lists (cp_bundle_table).
 * The input is written to a scratch file first (the reader takes a path).
 * Properties: no crash, no leak; a refusal has a message naming the file; an
 * accepted bundle lists at least one table, named FILE:NAME in ascending
 * order, and each of its tables loads or is refused with a message naming
 * it. */
#define _POSIX_C_SOURCE 200809L
#include <stdio.h>
#include <string.h>
#include <unistd.h>

#include "convpick/convpick.h"
#include "fuzz.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size) {
    if (size > (1u << 20)) return 0;
    static char path[64];
    if (!path[0]) snprintf(path, sizeof path, "/tmp/cp_fuzz_bundle_%ld.bundle", (long)getpid());
    FILE *f = fopen(path, "wb");
    if (!f) return 0;
    const size_t put = fwrite(data, 1, size, f);
    fclose(f);
    if (put != size) return 0;
    cp_bundle *b = NULL;
    char msg[512] = "";
    const cp_status st = cp_bundle_open(path, &b, msg, sizeof msg);
    if (st != CP_OK) {
        cpf_require(b == NULL && strncmp(msg, path, strlen(path)) == 0,
                    "a refusal has a message naming the file");
    } else {
        cpf_require(cp_bundle_count(b) > 0, "an accepted bundle has a table");
        for (size_t i = 0; i < cp_bundle_count(b); i++) {
            const char *name = cp_bundle_path(b, i);
            cpf_require(strncmp(name, path, strlen(path)) == 0 && name[strlen(path)] == ':',
                        "a table is named FILE:NAME");
            cpf_require(i == 0 || strcmp(cp_bundle_path(b, i - 1), name) < 0, "names ascend");
            cp_table *t = NULL;
            char tmsg[512] = "";
            if (cp_bundle_table(b, i, 0, &t, tmsg, sizeof tmsg) == CP_OK)
                cpf_require(t != NULL, "a loaded table");
            else
                cpf_require(t == NULL && strncmp(tmsg, name, strlen(name)) == 0,
                            "a table refused with a message naming it");
            cp_table_free(t);
        }
        cp_bundle_free(b);
    }
    unlink(path);
    return 0;
}
