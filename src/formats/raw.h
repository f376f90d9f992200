/*
 * raw.h: RAW.csv, the tracker's output and the clean stage's input: one row
 * per frame per robot, in frame order (DEVELOPERS.md, "File formats"):
 *   t_s,frame,id,u_px,v_px,x_m,y_m,heading_rad,status,margin,size_px,heading_source
 * This module is the only code that knows the columns: the streaming writer
 * (rows go out as they come, into an atomic file or a stream the caller
 * owns) and the streaming reader
 * (one validated row at a time through a callback, from a file or from
 * memory).  A file is known by its header; see format.h.
 *
 * Ownership: the writer is freed by wl_raw_commit or wl_raw_abort (NULL is
 * fine for both).  Rows handed to a reader's callback are borrowed for the
 * call.  Errors follow err.h: "file:line: what is wrong: what to do".
 */
#ifndef WL_FORMATS_RAW_H
#define WL_FORMATS_RAW_H

#include <stddef.h>
#include <stdio.h>

#include "core/err.h"

typedef enum { WL_RAW_LOST = 0, WL_RAW_OK } wl_raw_status;

/* Where a heading came from: a tag's orientation, the line from the back
 * cap to the front cap, or the direction of motion (one cap). */
typedef enum { WL_HS_NONE = 0, WL_HS_TAG, WL_HS_CAPS, WL_HS_MOTION } wl_heading_source;
/* The cell text of a heading source ("" for none). */
const char *wl_heading_source_name(wl_heading_source s);

typedef struct {
	double t_s;
	long long frame;
	long id;
	wl_raw_status status;
	/* the pose: NaN when the cell is empty (always for lost rows) */
	double u_px, v_px;  /* coded pixels, centre of the top-left pixel at (0, 0) */
	double x_m, y_m;    /* tank frame, on the robot's marker plane */
	double heading_rad; /* (-pi, pi]; NaN when unknown */
	double margin;      /* tag decision margin, or blob area in px */
	double size_px;     /* tag side, or blob diameter, in px */
	wl_heading_source heading_source;
	long line; /* reader: the row's line in the file */
} wl_raw_row;

/* ---- writing ---- */

typedef struct wl_raw_writer wl_raw_writer;
/* Opens RAW.csv atomically and writes the header. */
wl_status wl_raw_open(const char *path, wl_raw_writer **out, wl_err *err);
/* Writes the header and then the rows to fp, a stream the caller owns and
 * flushes (not atomic: `wakeline live` records as it goes, flushing each
 * frame's rows with one write).  Commit or abort then only free the writer. */
wl_status wl_raw_open_fp(FILE *fp, wl_raw_writer **out, wl_err *err);
/* Appends one row (status lost writes empty pose cells). */
void wl_raw_put(wl_raw_writer *w, const wl_raw_row *row);
/* Commits (renames into place) and frees; abort removes the temporary file
 * and frees. */
wl_status wl_raw_commit(wl_raw_writer *w, wl_err *err);
void wl_raw_abort(wl_raw_writer *w);

/* ---- reading ---- */

/* Called for each data row; a non-WL_OK return stops the reading and is
 * returned.  Checked before the call: numbers in number cells, a known
 * status and heading source, x_m and y_m on ok rows. */
typedef wl_status (*wl_raw_row_fn)(const wl_raw_row *row, void *ctx, wl_err *err);

/* Reads RAW.csv (required columns t_s, frame, id, x_m, y_m, heading_rad,
 * status; the others are read when present).  A file without data rows is
 * an error. */
wl_status wl_raw_read(const char *path, wl_raw_row_fn fn, void *ctx, wl_err *err);
/* Same over a buffer; name is used in messages. */
wl_status wl_raw_read_mem(const char *name, const char *data, size_t len, wl_raw_row_fn fn, void *ctx,
                          wl_err *err);

#endif
