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
	int journal_fd;
	struct {
		char path[PATH_MAX];
		char hash[17];
	} cal[8]; /* the CAL.json hashes read so far */
	size_t ncal;
} runner;

/* Monotonic seconds and the UTC time as "YYYY-MM-DDTHH:MM:SSZ". */
double batch_now_s(void);
void batch_utc_now(char *buf, size_t cap);

/* ---- resume.c: the resume rule and the journal ---- */

/* Complete: clip.json says ok for this very input and these settings, and
 * every output exists and is no older than the input.  *params_differ is
 * set when only the manifest's parameter cells changed. */
int batch_is_complete(const char *out_dir, const wl_batch_job *job, const char *hash,
                      const char *const *outputs, int *params_differ);
/* Removes the temporary files that a killed worker left in dir. */
void batch_remove_stale_tmp(const char *dir);
/* Appends one line to the journal (fd < 0: none). */
void batch_journal(int fd, const char *event, const char *clip, const char *hash, const char *msg);
/* A warning: to the journal and the batch's diag. */
void batch_warn(runner *r, const char *clip, const char *msg);

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
