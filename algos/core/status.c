/* Status strings. */
#include "convpick/status.h"

const char *cp_status_str(cp_status st) {
    switch (st) {
    case CP_OK: return "ok";
    case CP_EINVAL: return "invalid argument";
    case CP_ENOMEM: return "out of memory";
    case CP_EUNSUPPORTED: return "not supported";
    case CP_EIO: return "input/output error";
    case CP_EFORMAT: return "malformed file";
    case CP_EVERSION: return "unknown format version";
    case CP_EDEVICE: return "table made on another device";
    case CP_ENOTFOUND: return "not found";
    }
    return "unknown status";
}
