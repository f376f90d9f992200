/*
 * batch.h: a whole sweep: clip discovery under a folder, each clip's options
 * from the batch's and its manifest row (formats/manifest.h), a resumable
 * job runner that processes clips in forked worker processes, and the merge
 * that rebuilds summary.csv and report.html from the clip folders alone.
 *
 * Pipeline position: above the pipeline (each worker calls wl_process_clip
 * with the clip's options) and report (summary.csv, report.html); below the
 * command line.
 *
 * Output folder layout (OUT = the batch's -o):
 *   OUT/clips/<name>/        one folder per clip: the clip function's files
 *                            and clip.json (the done marker, written last)
 *   OUT/journal.log          append-only history, one line per event
 *                            (journal-<k>.log for shard k)
 *   OUT/batch.json           the batch's settings and the manifest rows that
 *                            named missing clips (read by merge)
 *   OUT/summary.csv          one row per run, failed or missing clip
 *   OUT/report.html, OUT/sweep_*.svg/.png
 * <name> is the clip's path relative to the clip folder with '/' written as
 * "__" and the extension's '.' as '_' (sub/a.mp4 -> sub__a_mp4).
 *
 * Ownership: *_init/_release pairs for embedded structs; strings inside are
 * owned by the struct.  Jobs and events hand out borrowed pointers valid for
 * the call only.
 *
 * Errors: set-up problems (unreadable manifest, folder not writable, another
 * batch holding the lock) return an error; a failing clip does not: it is
 * counted in wl_batch_result and listed in summary.csv with its message.
 */
#ifndef WL_BATCH_H
#define WL_BATCH_H

#include <stddef.h>

#include "core/err.h"
#include "core/diag.h"
#include "formats/manifest.h"
#include "pipeline/pipeline.h"
#include "report/report.h"

/* ---- discovery ----------------------------------------------------------- */

typedef struct {
	size_t n;
	char **rel; /* paths relative to the searched folder, sorted bytewise */
} wl_cliplist;

void wl_cliplist_release(wl_cliplist *l);
/* 1 when the name ends in a video extension (mp4 mov m4v avi mkv webm, any
 * case). */
int wl_batch_is_video(const char *name);
/* Finds the video files under dir (recursively, at most 16 levels; names
 * starting with '.' and the folder `skip_dir` are left out; NULL skips none).
 * The order is bytewise by relative path, so it is the same on every run. */
wl_status wl_batch_discover(const char *dir, const char *skip_dir, wl_cliplist *out, wl_err *err);
/* The clip folder name of a relative clip path (see the layout above);
 * buf holds cap bytes. */
char *wl_batch_clip_name(const char *rel, char *buf, size_t cap);

/* ---- jobs ---------------------------------------------------------------- */

typedef struct {
	const char *clip_path;       /* the video file (clip folder + rel) */
	const char *clip_rel;        /* relative to the clip folder */
	const char *out_dir;         /* the clip's output folder; exists */
	const char *cal_path;        /* the manifest's `cal` or the batch's */
	const wl_manifest_row *row;  /* the clip's manifest row, NULL when none */
	const wl_process_opts *opts; /* the clip's options: the batch's with the row's option cells
	                                applied and its robots loaded (wl_batch_clip_opts) */
	size_t nparams;              /* manifest columns other than clip */
	const char *const *param_names;
	const char *const *param_values;
	const wl_diag *diag; /* in the worker: warnings and progress, forwarded to the parent */
	int threads;         /* decoder threads for this clip when its options leave them at 0
	                        (wl_batch_opts.threads or the CPUs the process may use / jobs; at least 1) */
} wl_batch_job;

/* The per-clip work.  Runs in a forked worker process (so a crash or a leak
 * stays in that clip); must write every file of wl_batch_opts.outputs into
 * job->out_dir, atomically.  Returns WL_OK or an error with a message.  The
 * default (wl_batch_opts.fn NULL) loads the clip's CAL.json once and calls
 * wl_process_clip. */
typedef wl_status (*wl_batch_clip_fn)(const wl_batch_job *job, void *ctx, wl_err *err);

/* What happened to a clip; warnings and progress go through the batch's
 * wl_diag instead. */
typedef enum {
	WL_BATCH_EV_START, /* a clip was handed to a worker */
	WL_BATCH_EV_DONE,  /* a clip finished well */
	WL_BATCH_EV_SKIP,  /* a clip was complete already */
	WL_BATCH_EV_FAIL   /* a clip failed: msg says why */
} wl_batch_ev_kind;

typedef struct {
	wl_batch_ev_kind kind;
	const char *clip; /* relative path */
	const char *msg;  /* for FAIL */
	size_t finished;  /* clips done, skipped or failed so far */
	size_t total;     /* clips of this run */
	size_t failed;
	size_t running;
} wl_batch_event;

typedef void (*wl_batch_event_fn)(const wl_batch_event *ev, void *ctx);

/* How a run keeps a second run of the same shard out of OUT. */
typedef enum {
	WL_BATCH_LOCK_FLOCK = 0, /* flock() on OUT/.lock-<shard> (released by the kernel when the run dies) */
	WL_BATCH_LOCK_DIR,       /* a directory OUT/.lock-<shard>.d made with mkdir, for file systems
	                            without flock; left behind by a killed run (taken over on the same
	                            host when its pid is gone, else to be removed by hand) */
	WL_BATCH_LOCK_NONE       /* no lock: the caller makes sure runs do not overlap */
} wl_batch_lock_mode;

typedef struct {
	const char *clip_dir;        /* DIR: where the clips are */
	const char *out_dir;         /* OUT: created when missing */
	const char *cal_path;        /* the default CAL.json (may be NULL if every row has `cal`) */
	const char *manifest_path;   /* NULL: no manifest */
	int jobs;                    /* parallel workers; <= 0: wl_batch_cpus() */
	int threads;                 /* decoder threads per clip; <= 0: wl_batch_cpus() / jobs, at least 1 */
	int force;                   /* 1: redo complete clips */
	wl_batch_lock_mode lock;     /* default: flock */
	const wl_process_opts *proc; /* every clip's options (NULL: the defaults); a manifest row's
	                                option cells override them for its clip; proc->diag is not
	                                used (the workers report through `diag`) */
	const char *settings; /* more text that changes outputs, hashed with the options (may be NULL) */
	const char *const *outputs; /* NULL-terminated file names each clip folder must hold
	                               (NULL: wl_batch_outputs, the pipeline's) */
	wl_batch_clip_fn fn;        /* NULL: the pipeline */
	void *fn_ctx;
	wl_batch_event_fn on_event; /* may be NULL */
	void *ev_ctx;
	const wl_diag *diag;          /* warnings (the manifest, each clip's stages: "clip: stage: ...") and
	                                 progress (stage "batch": clips done, counting the parts of running
	                                 ones, of the clips to run); may be NULL */
	int shard_index, shard_count; /* process clips i with i % count == index; count <= 1: all */
	wl_report_sweep_opts sweep;   /* for the report */
} wl_batch_opts;

/* The files the pipeline writes into a clip folder (and process.log). */
extern const char *const wl_batch_outputs[];

/* A clip's options: base (NULL: the defaults) with the row's option cells
 * applied (row may be NULL) and the row's ROBOTS.csv loaded.  Errors name
 * the robots file. */
wl_status wl_batch_clip_opts(const wl_process_opts *base, const wl_manifest_opts *row, wl_process_opts *out,
                             wl_err *err);

typedef struct {
	size_t clips;   /* clips of this run (after sharding) */
	size_t done;    /* processed well now */
	size_t skipped; /* complete from before */
	size_t failed;
	size_t missing;  /* manifest rows whose clip does not exist */
	size_t unlisted; /* clips without a manifest row (processed) */
	size_t runs;     /* rows of summary.csv with status ok */
	int cpus;        /* CPUs this process may use (wl_batch_cpus) */
	int jobs;        /* workers at once */
	int threads;     /* decoder threads per clip */
} wl_batch_result;

/* The CPUs this process may use: those of its affinity mask
 * (sched_getaffinity, which taskset and Slurm's task binding set), fewer
 * when SLURM_CPUS_PER_TASK says so (Slurm without task binding leaves the
 * mask whole), never the machine's count regardless of the allocation. */
int wl_batch_cpus(void);

/* Runs the batch: discovers clips, reads the manifest, skips complete clips,
 * runs the rest in up to o->jobs workers, records each in clip.json and the
 * journal, then (unless sharded) rebuilds summary.csv and report.html with
 * wl_batch_merge.  Interrupting it at any point leaves no half-written file;
 * running it again finishes the rest.  Returns WL_OK when the batch ran, even
 * if clips failed (see res). */
wl_status wl_batch_run(const wl_batch_opts *o, wl_batch_result *res, wl_err *err);

/* What a run would do, without running: reads the manifest, finds the
 * clips and writes OUT/batch.json (the sweep, o->shard_count shards) so
 * that merge and `batch --status` know every clip even of shards that never
 * start.  res gets clips (all of them), missing and unlisted.  For job
 * submitters (`batch --slurm`). */
wl_status wl_batch_plan(const wl_batch_opts *o, wl_batch_result *res, wl_err *err);

/* Rebuilds OUT/summary.csv, the sweep plots and OUT/report.html from
 * OUT/clips/<name>/clip.json and summary.json (and OUT/batch.json for the
 * manifest's missing clips and the batch's sweep options; fields set in
 * `sweep` (may be NULL) replace those).
 * Clip folders without path_m.png get their plots drawn from clean.csv and
 * summary.json.  res may be NULL. */
wl_status wl_batch_merge(const char *out_dir, const wl_report_sweep_opts *sweep, wl_batch_result *res,
                         wl_err *err);

/* Called by wl_batch_merge_report for every clip that failed (status
 * "failed") or has no result (status "missing"), with its message. */
typedef void (*wl_batch_problem_fn)(const char *clip, const char *status, const char *msg, void *ctx);

/* wl_batch_merge, telling on_problem (may be NULL) about each failed or
 * missing clip.  A clip is missing when OUT/batch.json lists it (the
 * sweep as planned or as any shard saw it) and its folder has no
 * clip.json, when its folder has no clip.json (an interrupted run), or
 * when a manifest row names a clip that does not exist; each gets a row in
 * summary.csv and report.html saying which shard to run again.  Failed and
 * missing clips are counted in res; they are not an error of the merge. */
wl_status wl_batch_merge_report(const char *out_dir, const wl_report_sweep_opts *sweep,
                                wl_batch_problem_fn on_problem, void *ctx, wl_batch_result *res, wl_err *err);

/* ---- status ---------------------------------------------------------------- */

typedef enum {
	WL_BATCH_DONE = 0,    /* clip.json says ok */
	WL_BATCH_FAILED,      /* clip.json says failed: msg */
	WL_BATCH_RUNNING,     /* started (journal) and its shard's lock is held */
	WL_BATCH_INTERRUPTED, /* started, not ended, and no run holds its shard's lock */
	WL_BATCH_NOT_STARTED, /* no marker, never started */
	WL_BATCH_MISSING,     /* a manifest row names a clip that does not exist: msg */
	WL_BATCH_NSTATES
} wl_batch_state;

typedef struct {
	char *clip; /* relative to the clip folder */
	wl_batch_state state;
	int shard; /* its shard (0 unsharded), -1 for missing clips */
	char *msg; /* failed / missing: the message; else NULL */
} wl_batch_clip_status;

typedef struct {
	size_t n;
	wl_batch_clip_status *e; /* the sweep's clips in shard order, then the missing ones */
	int shard_count;
	int *shard_running; /* per shard: 1 when a run holds its lock */
	size_t count[WL_BATCH_NSTATES];
} wl_batch_status_report;

/* Where the sweep in out_dir stands: every clip of batch.json with its
 * state, from the clip folders' done markers, the journals' last event per
 * clip and the shards' locks.  Only reads; works while shards run (on any
 * node that sees OUT; "running" needs locks that work across nodes, else
 * such clips show as interrupted).  wl_batch_status_release frees st. */
wl_status wl_batch_status(const char *out_dir, wl_batch_status_report *st, wl_err *err);
void wl_batch_status_release(wl_batch_status_report *st);
const char *wl_batch_state_name(wl_batch_state s);

/* Settings hash of the resume rule (FNV-1a, 64 bits, as 16 hex digits):
 * over `settings` and the bytes of each file of the NULL-terminated list
 * (the clip's CAL.json). */
wl_status wl_batch_settings_hash(const char *settings, const char *const *files, char out[17], wl_err *err);

/* The resume rule's key of an input file: SHA-256 (hex) over its size and
 * three 64 KiB blocks of its content (the first, one from the middle and
 * the last; the whole file when it is smaller than 192 KiB).  Fast on
 * large clips, blind to file times.  *size gets the size in bytes. */
wl_status wl_batch_input_digest(const char *path, char hex[65], long long *size, wl_err *err);

/* Writes clip.json into a clip folder (atomically): for commands that
 * process one clip outside a batch so that merge can pick it up. */
wl_status wl_batch_mark(const char *out_dir, const wl_batch_job *job, const char *settings_hash, int ok,
                        const char *error, double elapsed_s, wl_err *err);

#endif
