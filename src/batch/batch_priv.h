/*
 * batch_priv.h: private to src/batch/: what the runner's files share: the
 * state of one clip job and of the whole run, the resume rule and the
 * journal (resume.c), the worker side of the pipe (worker.c) and the
 * runner that forks the workers and reads their messages (runner.c).
 * Not part of the library's interface.
 */
#ifndef WL_BATCH_PRIV_H
#define WL_BATCH_PRIV_H

#include <limits.h>
#include <sys/stat.h>
#include <sys/types.h>

#include "batch/batch.h"

#define MAX_JOBS 256

/* One clip of the run: its job, and while a worker runs it, the worker. */
typedef struct {
	wl_batch_job job;
	char rel[PATH_MAX], clip_path[PATH_MAX], out_dir[PATH_MAX], cal[PATH_MAX];
	char hash[17];
	char hash_err[512];
	char digest[65]; /* the input's content digest ("" until computed or unreadable) */
	long long size;
	char *wclip, *wout, *wcal; /* the paths the worker sees: relative to OUT, its folder */
	const char **names, **values;
	/* running state */
	pid_t pid;
	int fd;
	char buf[1024];
	size_t blen;
	char msg[512];
	long frames, total;
	double t0;
} clipjob;

/* The run. */
typedef struct {
	const wl_batch_opts *o;
	wl_batch_result *res;
	clipjob *jobs;
	size_t njobs;
	size_t finished;
	size_t running;
	long frames_done;
	double t_start, t_last_ev;
	int journal_fd;
	int threads; /* decoder threads of each clip */
	char out_abs[PATH_MAX], clip_dir_abs[PATH_MAX];
} runner;

/* Monotonic seconds and the UTC time as "YYYY-MM-DDTHH:MM:SSZ". */
double batch_now_s(void);
void batch_utc_now(char *buf, size_t cap);

/* ---- resume.c: the resume rule and the journal ---- */

/* Complete: clip.json says ok for this very input (size and content digest,
 * wl_batch_input_digest) and these settings, and every output exists.
 * *params_differ is set when only the manifest's parameter cells changed. */
int batch_is_complete(const char *out_dir, const wl_batch_job *job, const char *digest, long long size,
                      const char *hash, const char *const *outputs, int *params_differ);
/* Writes clip.json (see wl_batch_mark) with the input's digest and size as
 * the caller computed them (digest "" or size < 0: not recorded). */
wl_status batch_mark(const char *out_dir, const wl_batch_job *job, const char *digest, long long size,
                     const char *settings_hash, int ok, const char *error, double elapsed_s, wl_err *err);
/* Removes the temporary files that a killed writer left in dir: all of
 * them (owner NULL or ""), or only those named for one owner
 * (core/afile.h's wl_afile_set_owner), for folders that others write too. */
void batch_remove_stale_tmp(const char *dir, const char *owner);
/* Appends one line to the journal (fd < 0: none). */
void batch_journal(int fd, const char *event, const char *clip, const char *hash, const char *msg);

/* ---- sweep.c: batch.json, shard-K.json, the calibration check ---- */

/* 1 when the manifest has a `cal` column: calibrations assigned per clip. */
int batch_manifest_has_cal(const wl_manifest *m);
/* SHA-256 of a CAL.json ("" for none). */
wl_status batch_cal_digest(const char *cal_path, char hex[65], wl_err *err);
/* Writes OUT/batch.json: the sweep (paths relative to out_abs), every clip
 * of cl in shard order and the manifest rows not found (row->found). */
wl_status batch_sweep_save(const wl_batch_opts *o, const char *out_abs, const wl_manifest *m,
                           const wl_cliplist *cl, const char *cal_sha256, wl_err *err);
/* Writes OUT/shard-K.json (K = 0 unsharded). */
wl_status batch_shard_record(const wl_batch_opts *o, const char *cal_sha256, size_t nclips, int finished,
                             const char *started_utc, wl_err *err);
/* Refuses (WL_EINVAL, saying what to do) a shard whose calibration differs
 * from the sweep's or another shard's, unless the manifest assigns
 * calibrations per clip or o->force. */
wl_status batch_check_cal(const wl_batch_opts *o, const char *cal_sha256, wl_err *err);

/* ---- paths.c: paths stored relative to OUT ---- */

/* The absolute form of a path: realpath when it exists, else cwd + path
 * with "." and ".." resolved.  0 or -1. */
int batch_abspath(const char *path, char *out, size_t cap);
/* target (absolute) relative to the folder base (absolute): "a/b",
 * "../x/y", "." for base itself. */
void batch_relpath(const char *base, const char *target, char *out, size_t cap);
/* path (as typed, relative to the current folder) relative to base_abs,
 * newly allocated (free()); "" for NULL or ""; the path as typed when it
 * cannot be resolved; NULL when out of memory. */
char *batch_rel_to(const char *base_abs, const char *path);

/* ---- worker.c: the worker side of the pipe ---- */

/* Runs in the forked child: the clip function, its progress and its error
 * sent to fd; never returns. */
void batch_worker_main(runner *r, clipjob *j, int fd, pid_t parent) __attribute__((noreturn));
/* In the parent: decodes the whole lines a worker sent into j. */
void batch_worker_parse(clipjob *j);

#endif
