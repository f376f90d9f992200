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
#include <stdint.h>
#include <sys/stat.h>
#include <sys/types.h>

#include "batch/batch.h"

#define MAX_JOBS 256
#define BATCH_LOG "process.log" /* a clip's log: its warnings and how it ended */

/* One message from a worker to the parent.  Fixed size and smaller than
 * PIPE_BUF, so that each goes in one write() and arrives whole. */
enum { BATCH_MSG_PROGRESS = 1, BATCH_MSG_WARN, BATCH_MSG_RESULT, BATCH_MSG_ERROR };
typedef struct {
	uint32_t kind;
	int32_t status;     /* ERROR: the wl_status */
	double done, total; /* PROGRESS: frames done and expected (-1 unknown); RESULT: frames, runs */
	char stage[16];     /* PROGRESS, WARN: the stage */
	char text[480];     /* WARN, ERROR: the message */
} batch_msg;

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
	unsigned char buf[2 * sizeof(batch_msg)];
	size_t blen;
	char msg[512];        /* the worker's error message */
	double frames, total; /* reported by the worker */
	size_t runs;
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
	double t_start, t_last_ev;
	int journal_fd, journal_errno; /* the first failure to write the journal */
	struct {
		char path[PATH_MAX];
		char hash[17];
	} cal[8]; /* the CAL.json hashes read so far */
	size_t ncal;
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
/* Appends one line to the journal (fd < 0: none); a failure is kept in
 * *failed (the first errno), for the batch to report when it ends. */
void batch_journal(int fd, int *failed, const char *event, const char *clip, const char *hash,
                   const char *msg);
/* A warning: to the journal and the batch's diag. */
void batch_warn(runner *r, const char *clip, const char *msg);

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

/* Runs in the forked child: the clip's options resolved, the clip function
 * with a wl_diag that sends warnings and progress to fd (and writes them to
 * the clip's process.log), its error sent last; never returns. */
void batch_worker_main(runner *r, clipjob *j, int fd, pid_t parent) __attribute__((noreturn));
/* In the worker: tells the parent how many frames and runs the clip gave. */
void batch_worker_result(const wl_batch_job *job, int64_t frames, size_t runs);
/* In the parent: takes the whole messages a worker sent (progress into j,
 * warnings to the batch's diag and journal, the error into j->msg). */
void batch_worker_parse(clipjob *j, runner *r);

/* ---- clipopts.c ---- */

/* The default clip function: CAL.json loaded once, then wl_process_clip. */
wl_status batch_pipeline_clip(const wl_batch_job *job, void *ctx, wl_err *err);

#endif
