/*
 * watch.h: the camera watch, part of the tracking stage.  While a run is
 * tracked, the floor markers of the calibration are looked for again at a
 * low rate, each in a small window around where the camera model puts it.
 * When they have moved by more than a threshold (a bumped tripod, a sagging
 * mount), the camera's pose is registered again from the current frame
 * (intrinsics kept) and tracking carries on in the same tank frame; when
 * too few markers are in view to do that, the poses from the move on are
 * marked suspect.  Every move is kept for the RAW sidecar (raw.json) and
 * reported through the wl_diag channel.
 *
 * Pixels: frames are coded; a calibration in displayed pixels is handled
 * (points are turned with wl_orient_* at this boundary).
 *
 * Ownership: wl_watch_create / wl_watch_destroy (NULL ok); the calibration
 * is copied.  The moves array belongs to the watch.  Not thread-safe: one
 * watch per run, called from the tracking thread.
 */
#ifndef WL_TRACK_WATCH_H
#define WL_TRACK_WATCH_H

#include <stddef.h>
#include <stdint.h>

#include "calib/calib.h"
#include "core/afile.h"
#include "core/diag.h"
#include "core/err.h"

#define WL_WATCH_MAX_MOVES 64

typedef struct {
	int enabled;         /* 0: no watch */
	double period_s;     /* seconds between checks (default 0.5) */
	double threshold_px; /* a marker shift above this is a move (default 0.5 px) */
	int min_markers;     /* markers needed to register the pose again (default 3) */
	char family[32];     /* the floor markers' tag family (default tag36h11) */
	const wl_diag *diag; /* warnings (may be NULL) */
} wl_watch_opts;

void wl_watch_opts_init(wl_watch_opts *o);

/* One detected move of the camera. */
typedef struct {
	double t_s;             /* the check that saw it (the move happened after last_still_t_s) */
	int64_t frame;          /* that check's frame */
	double last_still_t_s;  /* the previous check, which still agreed (-1: the first check) */
	double shift_px;        /* RMS shift of the markers' centres since the last agreement */
	int markers;            /* markers seen at the check */
	int reregistered;       /* 1: the pose was registered again; 0: too few markers (suspect) */
	double rms_px;          /* reprojection RMS of the new pose (NaN when not registered) */
	double turn_deg;        /* rotation between the old and the new pose */
	double centre_shift_mm; /* movement of the camera centre */
} wl_camera_move;

typedef struct wl_watch wl_watch;

/* A watch for coded frames width×height shown turned by rotation_deg.
 * Markers are the calibration's points named "<id>" and "<id>.c0".."c3"
 * (centre and corners, as `wakeline calibrate --layout` writes them);
 * without any, the watch has nothing to look at: every call is a no-op
 * and the sidecar says "markers": 0. */
wl_status wl_watch_create(const wl_watch_opts *o, const wl_calib *cal, int width_px, int height_px,
                          int rotation_deg, wl_watch **out, wl_err *err);
void wl_watch_destroy(wl_watch *w);

/* 1 when a check falls due at or before t_s (it needs a whole frame). */
int wl_watch_due(const wl_watch *w, double t_s);

/* Checks one whole coded luma frame.  *moved is set to 1 when the camera
 * was registered again: wl_watch_camera then gives the new camera. */
wl_status wl_watch_frame(wl_watch *w, const uint8_t *luma, int stride, double t_s, int64_t frame, int *moved,
                         wl_err *err);

/* The current camera model (the calibration's, or the last registered). */
const wl_camera *wl_watch_camera(const wl_watch *w);

/* The moves so far; *suspect_from_t_s is the time from which poses are
 * suspect (a move that could not be registered; NaN if none). */
int wl_watch_moves(const wl_watch *w, const wl_camera_move **moves, double *suspect_from_t_s);

/* Checks made, and floor markers the calibration names. */
int wl_watch_checks(const wl_watch *w);
int wl_watch_markers(const wl_watch *w);

/* CPU time the watch has spent (its thread's), seconds: for benchmarks. */
double wl_watch_cpu_s(const wl_watch *w);

/* Writes the RAW sidecar beside RAW.csv (same stem, ".json": raw.csv ->
 * raw.json) atomically: the watch's settings and "camera_moves" (keys:
 * docs/track.md).  With w NULL the sidecar says the watch was off. */
wl_status wl_watch_write_sidecar(const wl_watch *w, const char *raw_csv_path, wl_err *err);
/* The sidecar staged, not yet in place (formats/rawside.h, wl_rawside_stage):
 * the caller commits *out after RAW.csv, or aborts it. */
wl_status wl_watch_stage_sidecar(const wl_watch *w, const char *raw_csv_path, wl_afile **out, wl_err *err);

/* WL_EINVAL when the sidecar's place holds a file that is not a RAW
 * sidecar (a CAL.json named like the RAW.csv): checked before a run, so
 * that nothing is overwritten. */
wl_status wl_watch_sidecar_check(const char *raw_csv_path, wl_err *err);

/* The sidecar's path for a RAW.csv path (into buf); 0 if it does not fit. */
int wl_watch_sidecar_path(const char *raw_csv_path, char *buf, size_t cap);

#endif
