/*
 * afile.h: atomic output files.  Every file wakeline writes goes through this:
 * the data is written to a temporary file beside the target
 * ("<dir>/.<name>.tmp-<pid>-<n>"), flushed, fsync'ed and renamed over the
 * target only on commit, so an interrupted run never leaves a half file.
 *
 * Ownership: wl_afile_open returns an object that exactly one of
 * wl_afile_commit or wl_afile_abort frees (both accept NULL).
 */
#ifndef WL_AFILE_H
#define WL_AFILE_H

#include <stddef.h>
#include <stdio.h>

#include "core/err.h"

typedef struct wl_afile wl_afile;

/* Names the owner of the temporary files this process makes from now on:
 * ".<name>.tmp-<tag>-<pid>-<n>" instead of ".<name>.tmp-<pid>-<n>", so that
 * a program sharing a folder with others (the shards of a batch) can find
 * and remove its own leftovers and no one else's.  Only letters and digits
 * of tag are kept (at most 31); NULL or "" gives the plain names again.
 * Process-wide and not thread-safe: set it before threads start (forked
 * children inherit it). */
void wl_afile_set_owner(const char *tag);
/* The tag in force ("" when none). */
const char *wl_afile_owner(void);

/* Opens a temporary file for `path`.  Fails with WL_EIO naming the path. */
wl_status wl_afile_open(const char *path, wl_afile **out, wl_err *err);

/* The stream to write to (binary mode).  Valid until sync, commit or abort. */
FILE *wl_afile_fp(wl_afile *af);

/* The temporary file's path (for libraries that want a file name). */
const char *wl_afile_tmp_path(const wl_afile *af);

/* Flushes, syncs and renames into place, then frees af.  On any failure
 * (a full disk is reported as "no space left on device") the temporary file
 * is removed, the target is left as it was, and WL_EIO names the target. */
wl_status wl_afile_commit(wl_afile *af, wl_err *err);

/* Flushes, syncs and closes the temporary file without renaming it, so that
 * the outputs of one step can all be made durable before any of them
 * replaces its target (then commit only renames).  On failure the temporary
 * file is removed and WL_EIO names the target; af stays the caller's, to
 * abort.  NULL is fine. */
wl_status wl_afile_sync(wl_afile *af, wl_err *err);

/* Removes the temporary file and frees af.  The target is untouched. */
void wl_afile_abort(wl_afile *af);

/* Writes `len` bytes to `path` atomically (open + write + commit). */
wl_status wl_write_file_atomic(const char *path, const void *data, size_t len, wl_err *err);

/* Reads a whole file into a NUL-terminated buffer that the caller frees with
 * free().  Refuses files larger than max_bytes (WL_ELIMIT). */
wl_status wl_read_file(const char *path, size_t max_bytes, char **out, size_t *len, wl_err *err);

/* Creates a directory and its parents (mkdir -p).  Existing is fine. */
wl_status wl_mkdirs(const char *path, wl_err *err);

#endif
