/*
 * rawside.h: the RAW sidecar, raw.json beside RAW.csv (same stem, ".json"):
 * the camera watch's record of a tracked run (track/watch.h; keys in
 * docs/track.md, "The RAW sidecar").  This module is the only code that
 * knows its keys: the tracker writes it, the clean stage reads it back to
 * carry the camera's moves on into CLEAN.json and summary.json.
 *
 *   {"format": "wakeline raw sidecar", "format_version": 1,
 *    "camera_watch": {"enabled": true, ...},
 *    "camera_moves": [{"t_s", "frame", "shift_px", "reregistered", ...}],
 *    "suspect": [{"from_t_s", "to_t_s"}]}
 *
 * Ownership: wl_rawside is a plain value (no heap).  Errors follow err.h.
 */
#ifndef WL_FORMATS_RAWSIDE_H
#define WL_FORMATS_RAWSIDE_H

#include <stddef.h>

#include "core/afile.h"
#include "core/err.h"

#define WL_RAWSIDE_MAX_MOVES 64

/* One move of the camera, as the watch saw it. */
typedef struct {
	double t_s;             /* the check that saw it */
	long long frame;        /* that check's frame */
	double last_still_t_s;  /* the check before, which agreed; NaN: the first check */
	double shift_px;        /* RMS shift of the markers since the last agreement */
	int markers;            /* markers seen at the check */
	int reregistered;       /* 1: the pose was registered again; 0: suspect from here */
	double rms_px;          /* of the new pose; NaN when not registered */
	double turn_deg;        /* between the old and new pose; NaN when not registered */
	double centre_shift_mm; /* likewise */
} wl_rawside_move;

typedef struct {
	int enabled; /* 0: the run was tracked without the watch */
	double period_s, threshold_px;
	int min_markers, markers, markers_in_view, checks, tag_checks;
	int n_moves; /* at most WL_RAWSIDE_MAX_MOVES (a reader keeps the first ones) */
	wl_rawside_move moves[WL_RAWSIDE_MAX_MOVES];
	double suspect_from_t_s; /* poses from here are suspect; NaN: none */
	double suspect_to_t_s;   /* until here; NaN: to the end */
} wl_rawside;

/* Watch off, no moves, nothing suspect. */
void wl_rawside_init(wl_rawside *s);

/* The sidecar's path for a RAW.csv path (into buf): the stem + ".json".
 * Returns 0 if it does not fit. */
int wl_rawside_path(const char *raw_csv_path, char *buf, size_t cap);

/* Writes the sidecar beside raw_csv_path, atomically. */
wl_status wl_rawside_write(const char *raw_csv_path, const wl_rawside *s, wl_err *err);

/* Writes the sidecar into its temporary file and makes it durable without
 * replacing the old one: *out is then the caller's, to wl_afile_commit
 * (only a rename) once RAW.csv is in place, or to wl_afile_abort when it
 * is not, so that a failed RAW.csv leaves the previous pair as it was.
 * On failure nothing is left and *out is NULL. */
wl_status wl_rawside_stage(const char *raw_csv_path, const wl_rawside *s, wl_afile **out, wl_err *err);

/* WL_EINVAL when the sidecar's place holds a file that is not a RAW sidecar
 * (a CAL.json named like the RAW.csv): checked before a run, so that
 * nothing is overwritten. */
wl_status wl_rawside_check(const char *raw_csv_path, wl_err *err);

/* Reads the sidecar beside raw_csv_path.  *found is 0 (and s initialised)
 * when there is none or the file there is not a RAW sidecar; a RAW sidecar
 * that cannot be read is an error naming it. */
wl_status wl_rawside_read(const char *raw_csv_path, wl_rawside *s, int *found, wl_err *err);

/* Moves whose bracket (last_still_t_s, t_s] overlaps [t0_s, t1_s], and the
 * seconds of [t0_s, t1_s] that are suspect. */
int wl_rawside_moves_in(const wl_rawside *s, double t0_s, double t1_s);
double wl_rawside_suspect_s(const wl_rawside *s, double t0_s, double t1_s);

#endif
