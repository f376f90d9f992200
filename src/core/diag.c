/* diag.c: the warning and progress channel (see diag.h). */
#include "core/diag.h"

#include <stdio.h>

void wl_diag_vwarn(const wl_diag *d, const char *stage, const char *fmt, va_list ap)
{
	char msg[1024];
	if (!d || !d->warn)
		return;
	vsnprintf(msg, sizeof msg, fmt, ap);
	d->warn(d->ctx, stage, msg);
}

void wl_diag_warn(const wl_diag *d, const char *stage, const char *fmt, ...)
{
	va_list ap;
	va_start(ap, fmt);
	wl_diag_vwarn(d, stage, fmt, ap);
	va_end(ap);
}

void wl_diag_progress(const wl_diag *d, const char *stage, double done, double total, double t_s)
{
	if (d && d->progress)
		d->progress(d->ctx, stage, done, total, t_s);
}
