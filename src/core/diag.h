/*
 * diag.h: the one channel through which the library tells its host about
 * things that are not errors: warnings the user should read and progress of
 * long work.  The library never prints; a stage that has something to say
 * calls wl_diag_warn / wl_diag_progress on the wl_diag it was given in its
 * options, and the host decides where it goes (the CLI installs a stderr
 * implementation, batch workers forward it to the parent, tests collect it).
 *
 * A NULL wl_diag, or NULL callbacks in it, are allowed everywhere: the
 * message is then dropped.  The callbacks are called from the thread that
 * does the work (tracking runs on a thread of its own); a host that shares
 * state between stages must lock it.
 *
 * Ownership: a wl_diag is a small value the host owns; the library borrows
 * it for the duration of a call and never keeps it.  The strings passed to
 * the callbacks are valid only during the call.
 */
#ifndef WL_DIAG_H
#define WL_DIAG_H

#include <stdarg.h>

typedef struct wl_diag {
	/* One line for the user, without "warning:" and without a newline;
	 * stage names the pipeline stage ("calibrate", "track", "clean",
	 * "measure", "batch", ...); the message follows the error rule of
	 * err.h ("what: where: what to do"). */
	void (*warn)(void *ctx, const char *stage, const char *msg);
	/* Progress of long work: `done` of `total` units (frames, clips, rows);
	 * total < 0 when unknown; t_s the time reached in the clip, NaN if none.
	 * Called often: a host throttles its own output. */
	void (*progress)(void *ctx, const char *stage, double done, double total, double t_s);
	void *ctx;
} wl_diag;

/* Formats and sends a warning (dropped when d or d->warn is NULL). */
void wl_diag_warn(const wl_diag *d, const char *stage, const char *fmt, ...)
        __attribute__((format(printf, 3, 4)));
void wl_diag_vwarn(const wl_diag *d, const char *stage, const char *fmt, va_list ap);

/* Sends progress (dropped when d or d->progress is NULL). */
void wl_diag_progress(const wl_diag *d, const char *stage, double done, double total, double t_s);

#endif
