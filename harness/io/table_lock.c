/* Writing a table document: under an advisory lock, merged with what another
 * process wrote meanwhile, then atomically (table_write.h). */
#define _POSIX_C_SOURCE 200809L
#include <errno.h>
#include <fcntl.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/file.h>
#include <unistd.h>

#include "algos/core/cpa.h"
#include "harness/io/report_json.h"
#include "harness/io/table_doc_impl.h"

static int same_file(const cph_file_id *a, const cph_file_id *b) {
    return a->exists && b->exists && a->dev == b->dev && a->ino == b->ino && a->size == b->size &&
           a->mtime.tv_sec == b->mtime.tv_sec && a->mtime.tv_nsec == b->mtime.tv_nsec;
}

/* The advisory lock of a table: PATH.lock, created once and left in place
 * (removing it would let a third process lock a new file while a second
 * still holds the old one).  Returns the descriptor, or -1 with msg set. */
static int lock_table(const char *path, char *msg, size_t cap) {
    const size_t len = strlen(path) + 6;
    char *lp = malloc(len);
    if (!lp) {
        cpa_fail(CP_ENOMEM, msg, cap, "%s: out of memory", path);
        return -1;
    }
    snprintf(lp, len, "%s.lock", path);
    int fd = open(lp, O_RDWR | O_CREAT | O_CLOEXEC, 0666);
    if (fd < 0) {
        cpa_fail(CP_EIO, msg, cap, "%s: cannot open the lock file %s: %s; the table was left as "
                                   "it is", path, lp, strerror(errno));
        free(lp);
        return -1;
    }
    int rc;
    while ((rc = flock(fd, LOCK_EX)) != 0 && errno == EINTR) {
    }
    if (rc != 0) {
        cpa_fail(CP_EIO, msg, cap, "%s: cannot lock %s: %s; the table was left as it is", path, lp,
                 strerror(errno));
        close(fd);
        fd = -1;
    }
    free(lp);
    return fd;
}

static cp_status write_locked(cph_table_doc *d, const char *path, char *msg, size_t cap) {
    const cph_file_id now = cph_file_identify(path);
    if (now.exists && !same_file(&now, &d->last) && !same_file(&now, &d->start)) {
        cp_status st = cph_table_merge_from_disk(d, path, msg, cap);
        if (st != CP_OK) return st;
    }
    cp_status st = cph_json_write_atomic(d->root, path, msg, cap);
    if (st == CP_OK) d->last = cph_file_identify(path);
    return st;
}

cp_status cph_table_doc_write(cph_table_doc *d, const char *path, char *msg, size_t cap) {
    int fd = lock_table(path, msg, cap);
    if (fd < 0) return CP_EIO;
    cp_status st = write_locked(d, path, msg, cap);
    close(fd); /* releases the lock */
    return st;
}
