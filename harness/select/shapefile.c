/* The shape-file reader: one layer a line, optional "name:" first, '#'
 * comments, blank lines ignored (syntax in shapefile.h).
 *
 * Lines are read into a fixed buffer; a line that does not fit is reported as
 * an error rather than split, so a corrupt or binary file cannot turn into a
 * stream of bogus layers. */
#define _POSIX_C_SOURCE 200809L /* fmemopen */
#include <ctype.h>
#include <errno.h>
#include <fcntl.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdint.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include "harness/select/shapefile.h"
#include "harness/select/layer_spec.h"
#include "harness/select/shape_spec.h"
#include "algos/core/cpa.h"

#define CPH_SHAPE_LINE_MAX 1024 /* characters per line, without the newline */
/* Layers per file: far above any network, low enough that a stream of
 * generated lines (a pipe, /dev/urandom) ends in an error, not in minutes of
 * de-duplication (cph_layers_add is linear in the list). */
#define CPH_SHAPE_FILE_MAX_LAYERS 10000

/* Reads the lines of f (a file, a pipe or a memory stream); path names it in
 * messages.  Does not close f. */
static cp_status load_stream(FILE *f, const char *path, cph_layer_list *out, char *msg,
                             size_t cap) {
    char line[CPH_SHAPE_LINE_MAX + 2];
    long lineno = 0;
    size_t added = 0;
    cp_status st = CP_OK;
    while (fgets(line, sizeof line, f)) {
        lineno++;
        size_t len = strlen(line);
        if (len && line[len - 1] == '\n')
            line[--len] = '\0';
        else if (!feof(f)) {
            st = cpa_fail(CP_EFORMAT, msg, cap, "%s:%ld: line longer than %d characters", path, lineno,
                      CPH_SHAPE_LINE_MAX);
            break;
        }
        if (len > CPH_SHAPE_LINE_MAX) {
            st = cpa_fail(CP_EFORMAT, msg, cap, "%s:%ld: line longer than %d characters", path, lineno,
                      CPH_SHAPE_LINE_MAX);
            break;
        }
        char *hash = strchr(line, '#');
        if (hash) *hash = '\0';
        char *text = cpa_trim(line);
        if (!*text) continue;
        char ctx[CPH_SHAPE_LINE_MAX / 2];
        snprintf(ctx, sizeof ctx, "%.400s:%ld", path, lineno);
        char name[CPH_LAYER_NAME_MAX + 1];
        int count = 1;
        cp_shape s;
        st = cph_parse_layer(text, ctx, name, &count, &s, msg, cap);
        if (st != CP_OK) {
            if (st != CP_ENOMEM) st = CP_EFORMAT;
            break;
        }
        if (!name[0]) snprintf(name, sizeof name, "layer%zu", added + 1);
        if (added >= CPH_SHAPE_FILE_MAX_LAYERS) {
            st = cpa_fail(CP_EFORMAT, msg, cap, "%s:%ld: more than %d layers in one file", path,
                      lineno, CPH_SHAPE_FILE_MAX_LAYERS);
            break;
        }
        if (cph_layers_add(out, name, &s, count) != CP_OK) {
            st = cpa_fail(CP_ENOMEM, msg, cap, "%s:%ld: out of memory or count overflow", path, lineno);
            break;
        }
        added++;
    }
    if (st == CP_OK && ferror(f))
        st = cpa_fail(CP_EIO, msg, cap, "%s: read error: %s", path, strerror(errno));
    if (st == CP_OK && added == 0)
        st = cpa_fail(CP_EFORMAT, msg, cap, "%s: no layers in the file", path);
    return st;
}

cp_status cph_load_shape_file(const char *path, cph_layer_list *out, char *msg, size_t cap) {
    struct stat sb;
    if (stat(path, &sb) == 0 && S_ISDIR(sb.st_mode))
        return cpa_fail(CP_EIO, msg, cap, "%s: cannot read: is a directory", path);
    /* Opened without blocking, then switched back: a FIFO that no program
     * writes reads as empty instead of hanging in open(). */
    int fd = open(path, O_RDONLY | O_NONBLOCK | O_CLOEXEC);
    if (fd < 0) return cpa_fail(CP_EIO, msg, cap, "%s: cannot open: %s", path, strerror(errno));
    int fl = fcntl(fd, F_GETFL);
    if (fl != -1) (void)fcntl(fd, F_SETFL, fl & ~O_NONBLOCK);
    FILE *f = fdopen(fd, "r");
    if (!f) {
        int e = errno;
        close(fd);
        return cpa_fail(CP_EIO, msg, cap, "%s: cannot open: %s", path, strerror(e));
    }
    cp_status st = load_stream(f, path, out, msg, cap);
    fclose(f);
    return st;
}

cp_status cph_load_shape_text(const char *text, size_t len, const char *name,
                              cph_layer_list *out, char *msg, size_t cap) {
    if (!name) name = "(text)";
    if (len == 0) return cpa_fail(CP_EFORMAT, msg, cap, "%s: no layers in the file", name);
    FILE *f = fmemopen((void *)(uintptr_t)text, len, "r");
    if (!f) return cpa_fail(CP_ENOMEM, msg, cap, "%s: cannot open the text: %s", name, strerror(errno));
    cp_status st = load_stream(f, name, out, msg, cap);
    fclose(f);
    return st;
}
