/*
 * markers.h: printable sheets of floor and robot markers (AprilTag codes
 * from the library's families) at exact scale, with each tag's id, its size
 * and a scale bar to check the print with a ruler.  Rendered with cairo to
 * SVG, PDF or PNG (chosen by the file name's extension); every page has the
 * paper's size.
 *
 * Size convention: size_mm is the side of the tag's black square (the
 * outer edge of its black border, AprilTag's "tag size"); the white quiet
 * zone of one cell around it is drawn too and must not be trimmed.
 */
#ifndef WL_MARKERS_H
#define WL_MARKERS_H

#include <stddef.h>

#include "core/err.h"

typedef struct {
	const char *family; /* "tag36h11" ... */
	const long *ids;
	int n_ids;
	double size_mm;              /* black square side */
	double dpi;                  /* PNG only (default 300) */
	double page_w_mm, page_h_mm; /* page (A4 portrait by default when 0) */
	int robot;                   /* 1: robot tags: a cut line, ticks on the centre lines and an
	                                arrow for the heading the tracker reports (the tag's "up") */
} wl_markers_opts;

/* Writes the sheet atomically, as many pages of page_w_mm x page_h_mm as the
 * tags need.  PDF: one file of all pages.  SVG and PNG: one file a page,
 * `path` itself when one page holds every tag, else `path` with -1, -2, ...
 * before the extension (wl_markers_page_path); a PNG says its resolution
 * (pHYs chunk), so it prints at scale.  *npages (may be NULL) receives the
 * number of pages.  Errors: unknown family, an id beyond the family's codes,
 * a tag larger than the page, I/O. */
wl_status wl_markers_render(const char *path, const wl_markers_opts *opts, int *npages, wl_err *err);

/* The file name of page `page` (1-based) of a sheet of npages pages written
 * to `path` as SVG or PNG; buf holds cap bytes.  Returns buf. */
char *wl_markers_page_path(const char *path, int page, int npages, char *buf, size_t cap);

#endif
