/* convpick status codes: every public call that can fail returns one.
 * Calls that can fail for a reason worth telling also take a message buffer
 * (char *msg, size_t cap) and write one line into it naming the field at fault. */
#ifndef CONVPICK_STATUS_H
#define CONVPICK_STATUS_H

typedef enum cp_status {
    CP_OK = 0,
    CP_EINVAL,       /* an argument or a shape field is invalid */
    CP_ENOMEM,       /* an allocation failed or a size overflowed */
    CP_EUNSUPPORTED, /* the algorithm does not support this shape or mode */
    CP_EIO,          /* a file could not be read or written */
    CP_EFORMAT,      /* a file is malformed (the message gives file:line:column) */
    CP_EVERSION,     /* a file is of an unknown format version */
    CP_EDEVICE,      /* a table belongs to another device and the caller refused that */
    CP_ENOTFOUND     /* no entry or algorithm by that name */
} cp_status;

/* A short constant description of a status ("invalid argument", ...). */
const char *cp_status_str(cp_status st);

#endif
