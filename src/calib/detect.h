/*
 * detect.h: floor-marker detection for calibration (AprilTag), averaged
 * over frames.  Pixels follow camera.h (centre of pixel 0 at 0).
 *
 * Ownership: wl_calib_tags_create / wl_calib_tags_destroy (NULL ok).  Not
 * thread-safe: one object per thread.
 */
#ifndef WL_CALIB_DETECT_H
#define WL_CALIB_DETECT_H

#include <stdint.h>

#include "core/err.h"

#define WL_TAGS_MAX_IDS 256
#define WL_TAGS_MAX_FRAMES 64 /* observations kept per marker for the median */

typedef struct wl_calib_tags wl_calib_tags;

typedef struct {
	double c[2];    /* centre, pixels */
	double p[4][2]; /* corners in the detector's order (see wl_calib_marker_corners) */
	double margin;  /* median decision margin */
	int frames;     /* frames the marker was seen in */
	double move_px; /* largest distance of a frame's centre from the median: the
	                 * camera or the marker moved (stabilisation, a bumped tripod) */
} wl_tag_obs;

/* family: "tag36h11", "tag25h9", "tag16h5" or "tagStandard41h12". */
wl_status wl_calib_tags_create(const char *family, wl_calib_tags **out, wl_err *err);
void wl_calib_tags_destroy(wl_calib_tags *t);

/* Detects tags in one 8-bit luma image; *n_seen: clean detections. */
wl_status wl_calib_tags_add(wl_calib_tags *t, const uint8_t *luma, int width_px, int height_px, int stride,
                            int *n_seen, wl_err *err);

/* The median observation of marker id; 0 when it was never seen. */
int wl_calib_tags_get(const wl_calib_tags *t, long id, wl_tag_obs *out);
int wl_calib_tags_frames(const wl_calib_tags *t);
/* The ids seen so far (up to max); returns their count. */
int wl_calib_tags_ids(const wl_calib_tags *t, long *ids, int max);

/* A tag family by name; *destroy frees it.  For the marker sheet too. */
struct apriltag_family;
wl_status wl_tag_family(const char *name, struct apriltag_family **fam,
                        void (**destroy)(struct apriltag_family *), wl_err *err);

#endif
