/*
 * page.h: what the report's HTML pages (report.html, each clip's run.html)
 * share: the head with the styles and a content security policy that
 * forbids every network request, escaping, the data block, and the inline
 * scripts.  Internal to src/report/.
 *
 * A page is one file: its data is a JSON block
 * (<script type="application/json" id="wl-data">), drawn by the scripts of
 * src/report/assets/ written inline after it.  Nothing is fetched; the only
 * references are relative links and images beside the page.
 */
#ifndef WL_REPORT_PAGE_H
#define WL_REPORT_PAGE_H

#include <stdio.h>

#include <cjson/cJSON.h>

#include "core/err.h"

/* HTML text and attribute escaping (& < > " '). */
void wl_page_esc(FILE *fp, const char *s);
/* A relative URL: each byte outside [A-Za-z0-9-_.~/] percent-encoded. */
void wl_page_url(FILE *fp, const char *s);
/* <!DOCTYPE html> ... <body>: charset, the content security policy (no
 * network: scripts and styles only inline, images only from the page's own
 * folder or data: URLs), an empty icon (no favicon request), the title and
 * page.css. */
void wl_page_head(FILE *fp, const char *title);
/* The data block: root printed as JSON with every '<' written as \u003c,
 * so that no string can close the script element.  WL_ENOMEM. */
wl_status wl_page_data(FILE *fp, const cJSON *root, wl_err *err);
/* The inline scripts: common.js, then the named asset (e.g. "report.js"),
 * then </body></html>. */
void wl_page_tail(FILE *fp, const char *script);

#endif
