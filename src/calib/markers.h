/*
 * markers.h: printable sheets of floor markers (AprilTag codes from the
 * library's families) at exact scale, with each tag's id, its size and a
 * scale bar to check the print with a ruler.  Rendered with cairo to SVG,
 * PDF or PNG (chosen by the file name's extension).
 *
 * Size convention: size_mm is the side of the tag's black square (the
 * outer edge of its black border, AprilTag's "tag size"); the white quiet
 * zone of one cell around it is drawn too and must not be trimmed.
 */
#ifndef WL_MARKERS_H
#define WL_MARKERS_H

#include "core/err.h"

typedef struct {
	const char *family; /* "tag36h11" ... */
	const long *ids;
	int n_ids;
	double size_mm;              /* black square side */
	double dpi;                  /* PNG only (default 300) */
	double page_w_mm, page_h_mm; /* page (A4 portrait by default when 0) */
} wl_markers_opts;

/* Writes the sheet atomically.  PDF: as many pages as needed; SVG and PNG:
 * one page of the page width, as tall as needed.  Errors: unknown family,
 * an id beyond the family's codes, a tag larger than the page, I/O. */
wl_status wl_markers_render(const char *path, const wl_markers_opts *opts, wl_err *err);

#endif
