/*
 * err.h: the status and error type that every fallible wakeline function uses.
 *
 * Fallible functions return a wl_status and take a `wl_err *err` last; on
 * failure they fill err->msg with one line in the form
 *     what failed 'subject': where: what to do
 * The library never prints and never exits; the CLI prints err->msg.
 * A NULL err is allowed everywhere: the message is then dropped.
 */
#ifndef WL_ERR_H
#define WL_ERR_H

#include <stdarg.h>

typedef enum {
	WL_OK = 0,
	WL_EINVAL,  /* bad argument or option value */
	WL_EIO,     /* file could not be opened, read or written (disk full too) */
	WL_EFORMAT, /* malformed CSV/JSON or a file of the wrong kind */
	WL_EDECODE, /* video could not be demuxed or decoded */
	WL_ECALIB,  /* calibration impossible or inconsistent */
	WL_ETRACK,  /* tracking failed */
	WL_ENOMEM,  /* allocation failed or an input past a sane bound */
	WL_ELIMIT   /* an input exceeds a documented limit */
} wl_status;

typedef struct {
	wl_status code;
	char msg[512];
} wl_err;

/* Sets err (if not NULL) and returns code, so that `return wl_err_set(...)` works. */
wl_status wl_err_set(wl_err *err, wl_status code, const char *fmt, ...) __attribute__((format(printf, 3, 4)));
wl_status wl_err_vset(wl_err *err, wl_status code, const char *fmt, va_list ap);

/* Prefixes an existing message ("prefix: old message") and sets err->code to
 * code.  Returns code, also when err is NULL, so that
 * `return wl_err_prefix(err, st, "...")` keeps the failure. */
wl_status wl_err_prefix(wl_err *err, wl_status code, const char *fmt, ...)
        __attribute__((format(printf, 3, 4)));

/* Resets err to WL_OK with an empty message. */
void wl_err_clear(wl_err *err);

/* A short name of a status ("io error", "bad format", ...). */
const char *wl_status_name(wl_status code);

#endif
