/* How a kernel that can be traced touches memory.  Kernel sources that the
 * cache study compiles a second time (algos/direct_loops.h,
 * algos/kernels/blocked_tile_ref.c) load and store through CPA_LD / CPA_ST.  A normal
 * build gets plain accesses; harness/cache_traced_*.c define both before
 * including the kernel so that every access also reaches the cache simulator. */
#ifndef CPA_LD
#define CPA_LD(ptr) (*(ptr))
#endif
#ifndef CPA_ST
#define CPA_ST(ptr, v) (*(ptr) = (v))
#endif
