/* Plugins: algorithms loaded from a shared library at run time.
 *
 * A plugin is a shared library that defines one or more cp_algo values, each
 * keeping the contract of convpick/algo.h (the one place it is written), and
 * exports one function of C linkage named CP_PLUGIN_ENTRY_NAME:
 *
 *     const cp_plugin_info *convpick_plugin_entry(void);
 *
 * returning a pointer to a constant cp_plugin_info that lives as long as the
 * library.  cp_plugin_load() opens the library, checks everything below and
 * only then adds its algorithms to the registry (cp_algo_count/at/find), after
 * the built-in ones; nothing is added when a check fails.  Checks, each
 * refused with one line naming the plugin file and the field:
 *  - the entry point exists, and abi_version == CP_PLUGIN_ABI_VERSION;
 *  - the plugin name and every algorithm name are [a-z0-9_], 1..31 bytes;
 *  - no algorithm name clashes with a built-in one, an algorithm of a plugin
 *    loaded before, or another of the same plugin; no plugin name twice;
 *  - summary, supports, workspace_size and run are set; tolerance is finite
 *    and > 0; 0 <= nparams <= CP_MAX_PARAMS; every parameter has a name
 *    ([a-z0-9_]) and a non-empty range (min <= max); defaults is set when
 *    nparams > 0; prepare is set when prepared_size is.
 * Nothing here runs the algorithm: whether it computes the right answer is
 * for `convpick verify` and tune's qualification against the oracle.
 *
 * A table entry chosen from a plugin records the plugin's name and the
 * content hash of its file (docs/table-format.md, "plugin"); cp_table_load
 * refuses such a table unless the same build of the plugin is loaded first.
 *
 * Not thread-safe: load plugins before any other thread uses the registry. */
#ifndef CONVPICK_PLUGIN_H
#define CONVPICK_PLUGIN_H

#include <stddef.h>

#include "convpick/algo.h"
#include "convpick/status.h"

/* The version of this header's cp_plugin_info and of convpick/algo.h's
 * cp_algo a plugin is built against; bumped when either changes layout. */
#define CP_PLUGIN_ABI_VERSION 1
#define CP_PLUGIN_ENTRY_NAME "convpick_plugin_entry"
#define CP_PLUGIN_MAX_ALGOS 16

typedef struct cp_plugin_info {
    int abi_version;             /* CP_PLUGIN_ABI_VERSION the plugin was built with */
    const char *name;            /* the plugin's name, [a-z0-9_] */
    size_t nalgos;               /* 1..CP_PLUGIN_MAX_ALGOS */
    const cp_algo *const *algos; /* nalgos algorithms */
} cp_plugin_info;

typedef const cp_plugin_info *(*cp_plugin_entry_fn)(void);

typedef struct cp_plugin cp_plugin;

/* Loads the plugin at path (a path with a '/' is used as is; otherwise the
 * dynamic linker's search applies) and registers its algorithms.  *out (may
 * be NULL) gets the loaded plugin.  CP_EIO (cannot open), CP_ENOTFOUND (no
 * entry point), CP_EVERSION (ABI), CP_EINVAL (a declaration refused, a name
 * clash) with one line in msg. */
cp_status cp_plugin_load(const char *path, const cp_plugin **out, char *msg, size_t cap);

/* The plugins loaded, in load order. */
size_t cp_plugin_count(void);
const cp_plugin *cp_plugin_at(size_t i);
/* The loaded plugin of that name, or NULL. */
const cp_plugin *cp_plugin_find(const char *name);
const char *cp_plugin_name(const cp_plugin *p);
const char *cp_plugin_path(const cp_plugin *p);
/* 16 lower-case hex digits: FNV-1a 64 of the library file's bytes. */
const char *cp_plugin_hash(const cp_plugin *p);
/* The algorithms it added. */
size_t cp_plugin_algo_count(const cp_plugin *p);
const cp_algo *cp_plugin_algo_at(const cp_plugin *p, size_t i);

/* The plugin an algorithm of the registry came from, NULL for a built-in. */
const cp_plugin *cp_algo_plugin(const cp_algo *a);

/* Removes every plugin's algorithms from the registry and closes the
 * libraries.  No algorithm pointer, plan or table that uses them may be used
 * afterwards. */
void cp_plugins_unload_all(void);

#endif
