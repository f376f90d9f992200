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

/* ---- worker.c: the worker side of the pipe ---- */

/* Runs in the forked child: the clip function, its progress and its error
 * sent to fd; never returns. */
void batch_worker_main(runner *r, clipjob *j, int fd, pid_t parent) __attribute__((noreturn));
/* In the parent: decodes the whole lines a worker sent into j. */
void batch_worker_parse(clipjob *j);

#endif
