/* err.c: the error type (see err.h). */
#include "core/err.h"

#include <stdio.h>
#include <string.h>

wl_status wl_err_vset(wl_err *err, wl_status code, const char *fmt, va_list ap)
{
	if (err) {
		err->code = code;
		vsnprintf(err->msg, sizeof err->msg, fmt, ap);
	}
	return code;
}

wl_status wl_err_set(wl_err *err, wl_status code, const char *fmt, ...)
{
	va_list ap;
	va_start(ap, fmt);
	wl_err_vset(err, code, fmt, ap);
	va_end(ap);
	return code;
}

wl_status wl_err_prefix(wl_err *err, wl_status code, const char *fmt, ...)
{
	char pre[256], old[sizeof err->msg];
	va_list ap;
	if (!err)
		return code;
	va_start(ap, fmt);
	vsnprintf(pre, sizeof pre, fmt, ap);
	va_end(ap);
	memcpy(old, err->msg, sizeof old);
	snprintf(err->msg, sizeof err->msg, "%s: %s", pre, old);
	err->code = code;
	return code;
}

void wl_err_clear(wl_err *err)
{
	if (err) {
		err->code = WL_OK;
		err->msg[0] = '\0';
	}
}

const char *wl_status_name(wl_status code)
{
	switch (code) {
	case WL_OK:
		return "ok";
	case WL_EINVAL:
		return "invalid argument";
	case WL_EIO:
		return "i/o error";
	case WL_EFORMAT:
		return "bad format";
	case WL_EDECODE:
		return "decode error";
	case WL_ECALIB:
		return "calibration error";
	case WL_ETRACK:
		return "tracking error";
	case WL_ENOMEM:
		return "out of memory";
	case WL_ELIMIT:
		return "limit exceeded";
	}
	return "unknown error";
}
