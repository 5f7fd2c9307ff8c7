/* Raw float32 files and atomic replacement (see rawfile.h).
 *
 * Files are little-endian whatever the host: on a big-endian host values are
 * byte-swapped on the way in and out, so a file means the same everywhere. */
#define _POSIX_C_SOURCE 200809L /* open, fstat, mkstemp, fsync, fchmod */
#include "harness/io/rawfile.h"
#include "algos/core/cpa.h"

#include <errno.h>
#include <math.h>
#include <fcntl.h>
#include <stdarg.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

static int host_is_big_endian(void) {
    const uint32_t one = 1;
    unsigned char b;
    memcpy(&b, &one, 1);
    return b == 0;
}

static void swap32(void *p, size_t count) {
    unsigned char *b = p;
    for (size_t i = 0; i < count; i++, b += 4) {
        unsigned char t0 = b[0], t1 = b[1];
        b[0] = b[3];
        b[1] = b[2];
        b[2] = t1;
        b[3] = t0;
    }
}

cp_status cph_read_f32(const char *path, const char *what, size_t count, float **out, char *msg,
                       size_t cap) {
    *out = NULL;
    if (count > SIZE_MAX / sizeof(float))
        return cpa_fail(CP_ENOMEM, msg, cap, "%s file %s: expected size overflows", what, path);
    const size_t want = count * sizeof(float);
    /* Checked before open(): opening a FIFO would wait for a writer. */
    struct stat pre;
    if (stat(path, &pre) == 0 && !S_ISREG(pre.st_mode))
        return cpa_fail(CP_EIO, msg, cap, "%s file %s: not a regular file", what, path);
    int fd = open(path, O_RDONLY);
    if (fd < 0)
        return cpa_fail(CP_EIO, msg, cap, "%s file %s: cannot open: %s", what, path, strerror(errno));
    struct stat stt;
    if (fstat(fd, &stt) != 0) {
        int e = errno;
        close(fd);
        return cpa_fail(CP_EIO, msg, cap, "%s file %s: cannot stat: %s", what, path, strerror(e));
    }
    if (!S_ISREG(stt.st_mode)) {
        close(fd);
        return cpa_fail(CP_EIO, msg, cap, "%s file %s: not a regular file", what, path);
    }
    if ((uintmax_t)stt.st_size != (uintmax_t)want) {
        close(fd);
        return cpa_fail(CP_EFORMAT, msg, cap,
                    "%s file %s: size is %jd bytes, expected %zu bytes (%zu float32 values)",
                    what, path, (intmax_t)stt.st_size, want, count);
    }
    float *buf = malloc(want ? want : 1);
    if (!buf) {
        close(fd);
        return cpa_fail(CP_ENOMEM, msg, cap, "%s file %s: cannot allocate %zu bytes", what, path, want);
    }
    size_t got = 0;
    while (got < want) {
        ssize_t r = read(fd, (char *)buf + got, want - got);
        if (r < 0 && errno == EINTR) continue;
        if (r <= 0) {
            int e = r < 0 ? errno : 0;
            close(fd);
            free(buf);
            return cpa_fail(CP_EIO, msg, cap, "%s file %s: read failed after %zu bytes: %s", what,
                        path, got, e ? strerror(e) : "file shrank while reading");
        }
        got += (size_t)r;
    }
    close(fd);
    if (host_is_big_endian()) swap32(buf, count);
    *out = buf;
    return CP_OK;
}

cp_status cph_f32_from_bytes(const void *data, size_t len, const char *name, const char *what,
                             size_t count, float **out, char *msg, size_t cap) {
    *out = NULL;
    if (count > SIZE_MAX / sizeof(float))
        return cpa_fail(CP_ENOMEM, msg, cap, "%s file %s: expected size overflows", what, name);
    const size_t want = count * sizeof(float);
    if (len != want)
        return cpa_fail(CP_EFORMAT, msg, cap,
                    "%s file %s: size is %zu bytes, expected %zu bytes (%zu float32 values)", what,
                    name, len, want, count);
    float *buf = malloc(want ? want : 1);
    if (!buf)
        return cpa_fail(CP_ENOMEM, msg, cap, "%s file %s: cannot allocate %zu bytes", what, name, want);
    if (want) memcpy(buf, data, want);
    if (host_is_big_endian()) swap32(buf, count);
    *out = buf;
    return CP_OK;
}

cph_nonfinite cph_count_nonfinite(const float *v, size_t count) {
    cph_nonfinite r = {0, 0};
    for (size_t i = 0; i < count; i++) {
        if (isnan(v[i]))
            r.nan++;
        else if (isinf(v[i]))
            r.inf++;
    }
    return r;
}

static int write_all(int fd, const void *data, size_t bytes) {
    const char *p = data;
    while (bytes) {
        ssize_t w = write(fd, p, bytes);
        if (w < 0 && errno == EINTR) continue;
        if (w == 0) errno = ENOSPC; /* write() made no progress and set no errno */
        if (w <= 0) return -1;
        p += w;
        bytes -= (size_t)w;
    }
    return 0;
}

cp_status cph_check_output_dir(const char *path, char *msg, size_t cap) {
    char dir[4096];
    snprintf(dir, sizeof dir, "%s", path);
    char *slash = strrchr(dir, '/');
    if (!slash)
        snprintf(dir, sizeof dir, ".");
    else if (slash == dir)
        dir[1] = '\0';
    else
        *slash = '\0';
    if (access(dir, W_OK | X_OK) != 0)
        return cpa_fail(CP_EIO, msg, cap, "directory %s is not writable: %s", dir, strerror(errno));
    return CP_OK;
}

/* Shared by both writers: `fill` writes the payload into fd. */
static cp_status write_atomic(const char *path, int (*fill)(int fd, const void *ctx),
                              const void *ctx, char *msg, size_t cap) {
    const char *slash = strrchr(path, '/');
    const size_t dirlen = slash ? (size_t)(slash - path) : 0;
    const char *base = slash ? slash + 1 : path;
    if (!*base) return cpa_fail(CP_EIO, msg, cap, "%s: not a file name", path);
    const size_t tlen = dirlen + strlen(base) + 16;
    char *tmp = malloc(tlen);
    char *dir = malloc(dirlen + 2);
    if (!tmp || !dir) {
        free(tmp);
        free(dir);
        return cpa_fail(CP_ENOMEM, msg, cap, "%s: out of memory", path);
    }
    if (slash) {
        memcpy(dir, path, dirlen);
        dir[dirlen] = '\0';
        if (dirlen == 0) strcpy(dir, "/");
        snprintf(tmp, tlen, "%s/.%s.XXXXXX", dirlen ? dir : "", base);
    } else {
        strcpy(dir, ".");
        snprintf(tmp, tlen, ".%s.XXXXXX", base);
    }
    cp_status st = CP_OK;
    int fd = mkstemp(tmp);
    if (fd < 0) {
        st = cpa_fail(CP_EIO, msg, cap, "%s: cannot create a temporary file in %s: %s; %s was left "
                  "as it was", path, dir, strerror(errno), path);
        goto out;
    }
    /* mkstemp makes the file 0600; give it the mode a plain create would. */
    mode_t mask = umask(0);
    umask(mask);
    if (fchmod(fd, (mode_t)(0666 & ~mask)) != 0 || fill(fd, ctx) != 0 || fsync(fd) != 0) {
        st = cpa_fail(CP_EIO, msg, cap, "%s: write failed: %s; %s was left as it was", path,
                  strerror(errno), path);
        close(fd);
        unlink(tmp);
        goto out;
    }
    if (close(fd) != 0) {
        st = cpa_fail(CP_EIO, msg, cap, "%s: close failed: %s; %s was left as it was", path,
                  strerror(errno), path);
        unlink(tmp);
        goto out;
    }
    if (rename(tmp, path) != 0) {
        st = cpa_fail(CP_EIO, msg, cap, "%s: cannot rename the temporary file into place: %s; %s was "
                  "left as it was", path, strerror(errno), path);
        unlink(tmp);
        goto out;
    }
    /* Make the rename itself durable. */
    int dfd = open(dir, O_RDONLY);
    if (dfd >= 0) {
        (void)fsync(dfd);
        close(dfd);
    }
out:
    free(tmp);
    free(dir);
    return st;
}

typedef struct {
    const void *data;
    size_t bytes;
} bytes_ctx;

static int fill_bytes(int fd, const void *ctx) {
    const bytes_ctx *c = ctx;
    return write_all(fd, c->data, c->bytes);
}

typedef struct {
    const float *v;
    size_t count;
} f32_ctx;

static int fill_f32(int fd, const void *ctx) {
    const f32_ctx *c = ctx;
    if (!host_is_big_endian()) return write_all(fd, c->v, c->count * sizeof(float));
    float chunk[1024];
    for (size_t i = 0; i < c->count; i += 1024) {
        size_t n = c->count - i < 1024 ? c->count - i : 1024;
        memcpy(chunk, c->v + i, n * sizeof(float));
        swap32(chunk, n);
        if (write_all(fd, chunk, n * sizeof(float)) != 0) return -1;
    }
    return 0;
}

cp_status cph_write_atomic(const char *path, const void *data, size_t bytes, char *msg,
                           size_t cap) {
    bytes_ctx c = {data, bytes};
    return write_atomic(path, fill_bytes, &c, msg, cap);
}

cp_status cph_write_f32_atomic(const char *path, const float *v, size_t count, char *msg,
                               size_t cap) {
    f32_ctx c = {v, count};
    return write_atomic(path, fill_f32, &c, msg, cap);
}
