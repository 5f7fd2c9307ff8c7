/* Reading a whole document into memory, bounded (codec.h): the one file
 * reader of the table loader and the results reader.  One read into memory,
 * then json_loadb: jansson's stream reader takes a file a character at a time,
 * noticeably slower on large tables. */
#define _POSIX_C_SOURCE 200809L /* O_CLOEXEC */
#include <errno.h>
#include <fcntl.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include "loader/codec.h"

/* A stream that does not start like a JSON object (/dev/zero, a binary pipe)
 * is refused before gigabytes of it are read. */
static int starts_badly(const char *b, size_t n) {
    size_t i = 0;
    while (i < n && (b[i] == ' ' || b[i] == '\t' || b[i] == '\n' || b[i] == '\r')) i++;
    return i < n && b[i] != '{';
}

cp_status cpl_read_file(const cpl_jctx *c, const char *path, size_t limit_any, const char *noun,
                        const char *format, char **data, size_t *len) {
    *data = NULL;
    *len = 0;
    struct stat sb;
    if (stat(path, &sb) != 0) return cpl_jfail(c, CP_EIO, "cannot read: %s", strerror(errno));
    if (S_ISDIR(sb.st_mode)) return cpl_jfail(c, CP_EIO, "cannot read: is a directory");
    const int regular = S_ISREG(sb.st_mode);
    if (regular && (uintmax_t)sb.st_size > limit_any)
        return cpl_jfail(c, CP_EFORMAT, "%jd bytes: larger than the %zu bytes a %s may have",
                         (intmax_t)sb.st_size, limit_any, noun);
    /* Opened without blocking, then switched back to blocking reads: a FIFO
     * that no program writes reads as empty instead of hanging in open(). */
    int fd = open(path, O_RDONLY | O_NONBLOCK | O_CLOEXEC);
    if (fd < 0) return cpl_jfail(c, CP_EIO, "cannot read: %s", strerror(errno));
    int fl = fcntl(fd, F_GETFL);
    if (fl != -1) (void)fcntl(fd, F_SETFL, fl & ~O_NONBLOCK);
    /* A regular file is read up to the size it had when opened (one that grows
     * meanwhile is refused rather than chased); anything else up to limit_any. */
    const size_t limit = regular ? (size_t)sb.st_size : limit_any;
    size_t size = 0, n = 0;
    char *buf = NULL;
    cp_status st = CP_OK;
    for (;;) {
        if (n == size) {
            size_t ncap = size ? size + (size >> 1) : (regular ? limit + 1 : 65536);
            if (ncap > limit + 1) ncap = limit + 1;
            char *nb = realloc(buf, ncap ? ncap : 1);
            if (!nb) {
                st = cpl_jfail(c, CP_ENOMEM, "out of memory reading %zu bytes", size);
                break;
            }
            buf = nb;
            size = ncap;
        }
        ssize_t got = read(fd, buf + n, size - n);
        if (got < 0 && errno == EINTR) continue;
        if (got < 0) {
            st = cpl_jfail(c, CP_EIO, "read error: %s", strerror(errno));
            break;
        }
        if (got == 0) break;
        if (!regular && n == 0 && starts_badly(buf, (size_t)got)) {
            st = cpl_jfail(c, CP_EFORMAT, "does not start with '{' (expected a %s JSON object)",
                           format);
            break;
        }
        n += (size_t)got;
        if (n > limit) break;
    }
    close(fd);
    if (st == CP_OK && n > limit)
        st = regular ? cpl_jfail(c, CP_EIO, "the file grew while being read (beyond its %zu "
                                            "bytes): is another program writing it?", limit)
                     : cpl_jfail(c, CP_EFORMAT, "more than the %zu bytes a %s may have",
                                 limit_any, noun);
    if (st != CP_OK) {
        free(buf);
        return st;
    }
    *data = buf;
    *len = n;
    return CP_OK;
}
