/* Raw little-endian float32 tensor files, as `convpick run` reads and writes
 * them, and the atomic file replacement every writer of the harness uses. */
#ifndef CONVPICK_RAWFILE_H
#define CONVPICK_RAWFILE_H

#include <stddef.h>

#include "convpick/status.h"

/* Reads exactly `count` float32 values from path into a new buffer (*out, free
 * with free()).  A file of another size is refused with a message naming the
 * file, its size and the expected size; `what` names the tensor ("input"). */
cp_status cph_read_f32(const char *path, const char *what, size_t count, float **out, char *msg,
                       size_t cap);

/* The same check and conversion for bytes already in memory (name stands for
 * the file in messages). */
cp_status cph_f32_from_bytes(const void *data, size_t len, const char *name, const char *what,
                             size_t count, float **out, char *msg, size_t cap);

/* NaN and infinite values among v[0..count). */
typedef struct cph_nonfinite {
    size_t nan, inf;
} cph_nonfinite;
cph_nonfinite cph_count_nonfinite(const float *v, size_t count);

/* Writes count float32 values little-endian to path atomically: a temporary
 * file in the same directory, fsync, rename over path, fsync of the directory.
 * On failure path is untouched and the temporary file removed. */
cp_status cph_write_f32_atomic(const char *path, const float *v, size_t count, char *msg,
                               size_t cap);

/* The same for arbitrary bytes. */
cp_status cph_write_atomic(const char *path, const void *data, size_t bytes, char *msg,
                           size_t cap);

/* CP_OK when the directory that will hold path exists and is writable, so that
 * a long run can refuse an unwritable output before it starts; otherwise
 * CP_EIO with "directory D is not writable: REASON". */
cp_status cph_check_output_dir(const char *path, char *msg, size_t cap);

#endif
