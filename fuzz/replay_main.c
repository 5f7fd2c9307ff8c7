/* Replays fuzz inputs through a target without libFuzzer: each argument is a
 * file or a directory of files (a corpus); every file is fed once to
 * LLVMFuzzerTestOneInput.  Built in the normal builds, so the Sanitize build
 * replays the committed corpora under ASan + UBSan. */
#define _POSIX_C_SOURCE 200809L
#include <dirent.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>

#include "fuzz.h"

static int replay_file(const char *path) {
    FILE *f = fopen(path, "rb");
    if (!f) {
        fprintf(stderr, "replay: %s: cannot open\n", path);
        return 1;
    }
    size_t cap = 4096, len = 0;
    unsigned char *buf = malloc(cap);
    for (;;) {
        if (!buf) {
            fclose(f);
            fprintf(stderr, "replay: %s: out of memory\n", path);
            return 1;
        }
        len += fread(buf + len, 1, cap - len, f);
        if (len < cap) break;
        unsigned char *nb = realloc(buf, cap * 2);
        if (!nb) free(buf);
        buf = nb;
        cap *= 2;
    }
    fclose(f);
    /* An exact-size copy, so that ASan sees a read past the input. */
    unsigned char *exact = malloc(len ? len : 1);
    if (!exact) {
        free(buf);
        return 1;
    }
    memcpy(exact, buf, len);
    free(buf);
    LLVMFuzzerTestOneInput(exact, len);
    free(exact);
    return 0;
}

static int cmp_names(const void *a, const void *b) {
    return strcmp(*(char *const *)a, *(char *const *)b);
}

static int replay_dir(const char *dir, int *count) {
    DIR *d = opendir(dir);
    if (!d) {
        fprintf(stderr, "replay: %s: cannot open the directory\n", dir);
        return 1;
    }
    char **names = NULL;
    size_t n = 0, cap = 0;
    struct dirent *e;
    while ((e = readdir(d))) {
        if (e->d_name[0] == '.') continue;
        if (n == cap) {
            cap = cap ? 2 * cap : 64;
            char **nn = realloc(names, cap * sizeof *nn);
            if (!nn) break;
            names = nn;
        }
        size_t len = strlen(dir) + strlen(e->d_name) + 2;
        names[n] = malloc(len);
        if (!names[n]) break;
        snprintf(names[n], len, "%s/%s", dir, e->d_name);
        n++;
    }
    closedir(d);
    if (n) qsort(names, n, sizeof *names, cmp_names);
    int bad = 0;
    for (size_t i = 0; i < n; i++) {
        bad |= replay_file(names[i]);
        (*count)++;
        free(names[i]);
    }
    free(names);
    return bad;
}

int main(int argc, char **argv) {
    if (argc < 2) {
        fprintf(stderr, "usage: %s FILE|DIR...\n", argv[0]);
        return 2;
    }
    int bad = 0, count = 0;
    for (int i = 1; i < argc; i++) {
        struct stat sb;
        if (stat(argv[i], &sb) != 0) {
            fprintf(stderr, "replay: %s: not found\n", argv[i]);
            bad = 1;
        } else if (S_ISDIR(sb.st_mode)) {
            bad |= replay_dir(argv[i], &count);
        } else {
            bad |= replay_file(argv[i]);
            count++;
        }
    }
    if (count == 0) {
        fprintf(stderr, "replay: no inputs found\n");
        return 1;
    }
    printf("replay: %d input(s) replayed without a crash\n", count);
    return bad;
}
