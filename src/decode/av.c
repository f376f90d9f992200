/*
 * av.c: loads FFmpeg's libraries on first use and fills the table of
 * av.h.  The table is written once, under pthread_once, before any caller
 * can read it.
 */
#define WL_AV_NO_REDIRECT /* the names are FFmpeg's own here */
#include "decode/av.h"

#include <dlfcn.h>
#include <pthread.h>
#include <stdio.h>
#include <string.h>

#include <libavcodec/version.h>
#include <libavformat/version.h>
#include <libavutil/version.h>
#include <libswscale/version.h>

wl_av_table wl_av_fn;

/* The libraries, in dependency order, by the sonames of the headers. */
static const struct {
	const char *soname, *package;
} libs[] = {
        {"libavutil.so." AV_STRINGIFY(LIBAVUTIL_VERSION_MAJOR),
         "libavutil" AV_STRINGIFY(LIBAVUTIL_VERSION_MAJOR)},
        {"libswscale.so." AV_STRINGIFY(LIBSWSCALE_VERSION_MAJOR),
         "libswscale" AV_STRINGIFY(LIBSWSCALE_VERSION_MAJOR)},
        {"libavcodec.so." AV_STRINGIFY(LIBAVCODEC_VERSION_MAJOR),
         "libavcodec" AV_STRINGIFY(LIBAVCODEC_VERSION_MAJOR)},
        {"libavformat.so." AV_STRINGIFY(LIBAVFORMAT_VERSION_MAJOR),
         "libavformat" AV_STRINGIFY(LIBAVFORMAT_VERSION_MAJOR)},
};
#define NLIBS (sizeof libs / sizeof libs[0])

static pthread_once_t once = PTHREAD_ONCE_INIT;
static char failure[512]; /* empty: loaded */

static void load(void)
{
	void *h[NLIBS];
	for (size_t i = 0; i < NLIBS; i++) {
		/* global: libavdevice, opened later by decode.c, links against these */
		if (!(h[i] = dlopen(libs[i].soname, RTLD_NOW | RTLD_GLOBAL))) {
			snprintf(failure, sizeof failure,
			         "FFmpeg's %s could not be loaded (%s): install it (apt-get install %s)",
			         libs[i].soname, dlerror(), libs[i].package);
			return;
		}
	}
	/* each name from the first library that has it; POSIX's way of turning
	 * dlsym's object pointer into a function pointer */
#define WL_AV_LOOKUP(name)                                                                                   \
	{                                                                                                    \
		void *sym = NULL;                                                                            \
		for (size_t i = 0; i < NLIBS && !sym; i++)                                                   \
			sym = dlsym(h[i], #name);                                                            \
		if (!sym) {                                                                                  \
			snprintf(failure, sizeof failure,                                                    \
			         "FFmpeg's libraries have no function " #name                                \
			         ": wakeline was built against another FFmpeg; rebuild it");                 \
			return;                                                                              \
		}                                                                                            \
		memcpy(&wl_av_fn.name, &sym, sizeof sym);                                                    \
	}
	WL_AV_FUNCS(WL_AV_LOOKUP)
#undef WL_AV_LOOKUP
	/* the libraries stay loaded for the life of the process */
}

wl_status wl_av_load(wl_err *err)
{
	pthread_once(&once, load);
	if (failure[0])
		return wl_err_set(err, WL_EIO, "%s", failure);
	return WL_OK;
}
