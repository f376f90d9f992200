/*
 * assets.h: the scripts and styles of the report pages (src/report/assets/),
 * compiled into the library by cmake/embed.cmake so that every page can
 * carry them inline and stay one self-contained file.
 */
#ifndef WL_REPORT_ASSETS_H
#define WL_REPORT_ASSETS_H

/* The contents of src/report/assets/<name> as a NUL-terminated string
 * (static storage, never freed), or "" for an unknown name. */
const char *wl_report_asset(const char *name);

#endif
