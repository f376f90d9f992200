/*
 * track.h: the tracker, the third stage of the pipeline: decoded frames ->
 * per-frame robot poses on the robot's marker plane (RAW.csv).
 *
 * Two detection back ends sit behind one per-frame loop:
 *   tag     AprilTags (tag36h11 by default); tag id = robot id; heading is
 *           the direction of the tag's printed "up" (bottom edge -> top edge).
 *   colour  one or two coloured caps per robot, thresholded in HSV (OpenCV's
 *           8-bit ranges: hue 0-179, saturation and value 0-255; lo > hi on
 *           hue wraps through red); heading from back cap to front cap, or
 *           from the direction of motion with a single cap.
 * After a full-frame find, each robot is searched in a window around its
 * predicted position (constant velocity in pixels); the whole frame is
 * searched again when a robot is lost and every rescan_s seconds.
 *
 * Pixels: detections are converted once, at the AprilTag boundary, from
 * AprilTag's convention (centre of pixel 0 at 0.5) to ours (at 0).  u_px,
 * v_px in the output are CODED pixels; when the calibration is in displayed
 * pixels, points are mapped with wl_orient_to_displayed before the camera
 * model, so rotation metadata does not change tank positions.
 *
 * Ownership: every _create has a _destroy (NULL ok).  Arrays handed out by
 * wl_tracker_frame are owned by the tracker and valid until the next call.
 * Errors: WL_EINVAL (bad options), WL_EIO/WL_EFORMAT (files), WL_EDECODE,
 * WL_ECALIB (calibration does not fit the clip), WL_ENOMEM.
 */
#ifndef WL_TRACK_H
#define WL_TRACK_H

#include <stdint.h>
#include <stdio.h>

#include "calib/calib.h"
#include "core/diag.h"
#include "core/err.h"
#include "formats/raw.h"
#include "track/watch.h"

#define WL_TRACK_MAX_ROBOTS 64

typedef enum { WL_TRACK_TAG = 0, WL_TRACK_COLOUR = 1 } wl_track_mode;

/* An HSV box in OpenCV's 8-bit ranges; hue wraps when lo[0] > hi[0]. */
typedef struct {
	int set;
	int lo[3], hi[3];
} wl_hsv_range;

/* What is known of one robot (from --ids or ROBOTS.csv). */
typedef struct {
	int id;
	double plane_height_m;     /* NaN: the run's default plane */
	double plane_height_tol_m; /* its tolerance (standard uncertainty); NaN: the default */
	double heading_offset_rad; /* added to the measured heading (mounting) */
	double body_diameter_m;    /* NaN if unknown; sizes the colour search */
	double tag_size_m;         /* printed side of the tag's black square; NaN if unknown
	                            * (calibrate --refine-with measures the camera height with it) */
	wl_hsv_range front, back;  /* colour mode; back unset: one cap */
} wl_robot_spec;

typedef struct {
	wl_track_mode mode;
	char family[32]; /* AprilTag family name, e.g. "tag36h11" */
	int n_robots;    /* known robots; with restrict_ids only these */
	wl_robot_spec robots[WL_TRACK_MAX_ROBOTS];
	int restrict_ids;      /* 1: ignore ids not in robots[] */
	double plane_height_m; /* NaN: the calibration's plane_height_m */
	double rescan_s;       /* full-frame search period (new robots) */
	/* AprilTag settings */
	float quad_decimate;      /* full-frame searches (default 2) */
	float window_decimate;    /* window searches; 0 (default): 2 for tags of >= 32 px, else 1 */
	float quad_sigma;         /* Gaussian blur before segmentation, px */
	double decode_sharpening; /* AprilTag's default 0.25 */
	int max_hamming;          /* corrected bits accepted (0 or 1) */
	double min_margin;        /* minimum decision margin (hamming 0) */
	double min_margin_h1;     /* minimum decision margin for hamming 1 */
	int edge_px;              /* reject tags with a corner this close to the frame edge */
	/* colour settings */
	int min_blob_px, max_blob_px; /* accepted blob areas, px */
	double min_fill;              /* blob area / bounding-box area, a shape test */
	/* search */
	int lost_after;        /* misses before a robot is lost (full-frame search) */
	double motion_min_m;   /* single cap: displacement needed for a heading */
	char robots_path[512]; /* the ROBOTS.csv the robots came from ("" if none), for messages */
	/* holding a robot the detector missed (status held) */
	double hold_max_s;     /* longest time since the last detection a pose is held; 0: never */
	double hold_min_score; /* lowest match quality held (tag mode: wl_tagfit.score) */
	/* rolling shutter: the readout from the first coded row to the last, s
	 * (0: global shutter; NaN, the default: the calibration's readout_ms);
	 * a pose's time is t + v / height * readout_s */
	double readout_s;
} wl_track_opts;

void wl_track_opts_init(wl_track_opts *o);

/* Finds robot id in o->robots, or adds it with defaults (NULL when full). */
wl_robot_spec *wl_track_robot(wl_track_opts *o, int id);

/* Parses "3,7,12" into robots (restrict_ids set).  WL_EINVAL names the item. */
wl_status wl_track_parse_ids(const char *s, wl_track_opts *o, wl_err *err);

/* Parses "h,s,v" (hue 0-179, s and v 0-255). */
int wl_track_parse_hsv(const char *s, int out[3]);

/* Loads ROBOTS.csv: id (required), plane_height_m, plane_height_tol_m, heading_offset_rad,
 * body_diameter_m, tag_size_m, front_hsv_lo, front_hsv_hi, back_hsv_lo, back_hsv_hi
 * (optional columns; empty cells keep defaults).  Sets restrict_ids and
 * robots_path. */
wl_status wl_track_load_robots(const char *path, wl_track_opts *o, wl_err *err);

/* Checks options that only make sense together: colour ranges for robots
 * in tag mode (a ROBOTS.csv meant for --mode colour) are an error that says
 * what to add, never a silent fallback to tags.  (What colour mode needs is
 * checked when the tracker is created.) */
wl_status wl_track_opts_check(const wl_track_opts *o, wl_err *err);

/* ---- one frame's detection result ---- */

typedef struct {
	int id;
	int ok;             /* 1: a pose this frame (detected, or held); 0: lost (pose fields NaN) */
	double u_px, v_px;  /* coded pixels, our centre convention */
	double x_m, y_m;    /* tank frame, on the robot's marker plane */
	double heading_rad; /* (-pi, pi], NaN when unknown */
	double margin;      /* tag decision margin, or blob area in px */
	double size_px;     /* tag side, or blob diameter, in px */
	wl_heading_source heading_source;
	/* held (RAW.csv status `held`): the detector missed, and the pose was
	 * refined against the image from the prediction; ok is 1 too */
	int held;
	double hold_score; /* held: match quality, 0..1; NaN otherwise */
	/* when the row through the pose's centre was exposed: t_s + v_px /
	 * height * readout (rolling shutter), t_s without; NaN when lost */
	double t_detect_s;
} wl_track_obs;

/* A frame as the tracker sees it (borrowed). */
typedef struct {
	int width_px, height_px; /* coded */
	const uint8_t *luma;
	int luma_stride;
	const uint8_t *rgb; /* packed RGB24, colour mode only */
	int rgb_stride;
	double t_s;
	int64_t index;
	/* the part of the frame that holds this frame's pixels (x, y, w, h);
	 * w == 0: all of it.  See wl_tracker_roi. */
	int roi[4];
} wl_track_image;

typedef struct {
	int64_t frames, full_scans, window_scans;
	int64_t rejected_edge, rejected_quality;
	/* rows (robot, frame) reported lost: each was searched in its frame (a
	 * full-frame search, a window, or a hold) or the robot was known to be
	 * out of view (never found by a full-frame search, predicted outside
	 * the image, or lost longer than the fast-search time; such robots are
	 * looked for by the full-frame rescans): lost_rows = lost_searched +
	 * lost_out_of_view */
	int64_t lost_rows, lost_searched, lost_out_of_view;
	int64_t held_rows, hold_tries;
	/* the rolling-shutter readout estimated from moving tags' shear (tag
	 * mode): detections used, the estimate and its standard error, s
	 * (NaN until there are some) */
	int64_t readout_n;
	double readout_s, readout_se_s;
	double readout_used_s; /* the readout the poses were timed with (options or CAL.json) */
	/* ... and the largest error the tags' own corner shear (without motion)
	 * can cause: on a straight path at a steady speed it looks like a
	 * readout, and no fit over the clip tells the two apart, s */
	double readout_bias_s;
	/* detections of new ids left out because WL_TRACK_MAX_ROBOTS robots
	 * were already tracked, and the first such id (-1: none) */
	int64_t over_limit;
	int first_over_limit_id;
} wl_track_stats;

typedef struct wl_tracker wl_tracker;

/* Creates a tracker for coded frames width×height shown turned by
 * rotation_deg.  The options and calibration are copied (cal's outline is
 * not needed).  Checks that the calibration fits the clip. */
wl_status wl_tracker_create(const wl_track_opts *opts, const wl_calib *cal, const char *cal_path,
                            int width_px, int height_px, int rotation_deg, wl_tracker **out, wl_err *err);

/* Tracks one frame.  *obs receives one entry per robot listed so far (known
 * robots from the start, found ones from their first sighting on), in
 * robot order; the array belongs to the tracker. */
wl_status wl_tracker_frame(wl_tracker *tr, const wl_track_image *img, const wl_track_obs **obs, int *n,
                           wl_err *err);

/* The region that frames lookahead_s seconds ahead must hold for the
 * searches the tracker expects to make (the union of the robots' windows,
 * grown by their motion over lookahead_s), so that a producer may copy only
 * that.  Returns 1 (and the whole frame) when a full-frame search may be
 * needed by then: at the start, when a robot is lost or not yet found, or
 * when a rescan falls due. */
int wl_tracker_roi(const wl_tracker *tr, double lookahead_s, int roi[4]);

const wl_track_stats *wl_tracker_stats(const wl_tracker *tr);
void wl_tracker_destroy(wl_tracker *tr);

/* Replaces the camera model (the camera watch registered a moved camera):
 * the tank frame and the intrinsics stay, poses from now on use cam. */
void wl_tracker_set_camera(wl_tracker *tr, const wl_camera *cam);

/* Maps a coded pixel to the plane z_m through the calibration (orientation
 * handled).  Returns 0 outside the model. */
int wl_tracker_pixel_to_plane(const wl_tracker *tr, double u, double v, double z_m, double *x_m, double *y_m);

/* ---- lower level: the AprilTag back end (one per thread) ---- */

typedef struct {
	int id, hamming;
	double margin;
	double c[2];    /* centre, our pixel convention, full-image coords */
	double p[4][2]; /* corners in AprilTag's order (tag coords (-1,1),(1,1),(1,-1),(-1,-1)) */
} wl_tagdet_hit;

typedef struct wl_tagdet wl_tagdet;

/* Creates a detector for a family ("tag36h11", "tag25h9", "tag16h5",
 * "tagStandard41h12", "tagCircle21h7"); WL_EINVAL names unknown ones. */
wl_status wl_tagdet_create(const char *family, int bits_corrected, wl_tagdet **out, wl_err *err);
/* Settings for the next detections. */
void wl_tagdet_set(wl_tagdet *d, float decimate, float sigma, double sharpening);
/* Detects in the window (x0,y0,w,h) of an 8-bit image (no copy: a view with
 * the stride).  Fills up to max hits, returns the count (detections found
 * beyond max are dropped); -1 on allocation failure. */
int wl_tagdet_detect(wl_tagdet *d, const uint8_t *img, int stride, int x0, int y0, int w, int h,
                     wl_tagdet_hit *hits, int max);
void wl_tagdet_destroy(wl_tagdet *d);

/* Bits of code word `id` of a family, for drawing test tags: fills
 * cells[total_width*total_width] with 0 (black) / 1 (white) and returns
 * total_width, or 0 for an unknown family or id. */
int wl_tagdet_render_cells(const char *family, int id, unsigned char *cells, int max_cells);

/* Cells across the black square's outer edge of a family (tag36h11: 8;
 * AprilTag's width_at_border), or 0 for an unknown family. */
int wl_tagdet_border_width(const char *family);
/* The cells that carry the code's bits (1) in the layout of
 * wl_tagdet_render_cells; returns total_width, 0 for an unknown family. */
int wl_tagdet_data_cells(const char *family, unsigned char *mask, int max_cells);

/* ---- lower level: holding a tag the detector missed (hold.c) ---- */

/* Maps a point of the marker plane to coded pixels; 0 outside the model. */
typedef int (*wl_plane_to_px_fn)(const void *ctx, double x_m, double y_m, double *u_px, double *v_px);

/* A tag's printed pattern (its family's code for its id, with the white
 * border), sampled over the card for aligning it with an image.  One per
 * robot; it keeps scratch space, so one thread at a time. */
typedef struct wl_tagmodel wl_tagmodel;
wl_status wl_tagmodel_create(const char *family, int id, wl_tagmodel **out, wl_err *err);
void wl_tagmodel_destroy(wl_tagmodel *m);

/* A tag's pose on its marker plane: centre and the direction of its up. */
typedef struct {
	double x_m, y_m, up_rad;
} wl_tagpose;

typedef struct {
	double score;               /* harmonic mean of frac_dark and frac_light, 0..1 */
	double frac_dark;           /* fraction of the pattern's dark samples that agree with the fit */
	double frac_light;          /* ... and of its light ones (the white border included) */
	double frac;                /* fraction of all samples that agree */
	double corr;                /* correlation of image and pattern over the agreeing samples */
	int bits_read;              /* code cells whose centre reads clearly dark or light */
	int bits_wrong;             /* ... and of them, those that differ from this id's code: */
	int bits_wrong_dark;        /* light in the code, read dark (a dark occluder does this) */
	int bits_wrong_light;       /* dark in the code, read light (glare does this) */
	int bits_total;             /* code cells of the family */
	int bits_dark;              /* ... dark in this id's code (the others are light) */
	int bits_ok_dark;           /* dark bits read dark */
	int bits_ok_light;          /* light bits read light */
	double contrast;            /* fitted white - black, grey levels */
	double sigma;               /* robust noise scale of the residuals, grey levels */
	double u_px, v_px, side_px; /* centre and mean side in coded pixels */
	double corners_px[4][2];    /* AprilTag's corner order */
	int iterations;
} wl_tagfit;

/* Aligns the pattern with the image around *guess.  corners: the tag's
 * corners in AprilTag's order on the plane, relative to its centre, in the
 * frame of its up direction (x along up, y to its left).  The image is read
 * only inside area (x, y, w, h).  ab: the black level and contrast to start
 * from (wl_tagmodel_levels at the last detection; NULL: fitted at the
 * guess, which a half-covered tag biases).  search_px: the radius of the
 * coarse search in pixels (0: none).  Returns 1 with *out and *fit, 0 when
 * the fit failed (off the image, degenerate, running away). */
int wl_tagmodel_fit(wl_tagmodel *m, const double corners[4][2], wl_plane_to_px_fn f, const void *ctx,
                    const uint8_t *img, int stride, const int area[4], const wl_tagpose *guess,
                    const double ab[2], double search_px, wl_tagpose *out, wl_tagfit *fit);

/* The pattern's black level ab[0] and contrast ab[1] (white - black, grey
 * levels) in the image at a detection's corners (pixels, AprilTag's
 * order).  Returns 0 when unreadable. */
int wl_tagmodel_levels(wl_tagmodel *m, const double corners_px[4][2], const uint8_t *img, int stride,
                       const int area[4], double ab[2]);

/* ---- lower level: the colour back end ---- */

/* OpenCV's 8-bit RGB -> HSV (H 0-179, S, V 0-255). */
void wl_rgb_to_hsv(int r, int g, int b, int *h, int *s, int *v);
int wl_hsv_in(const wl_hsv_range *r, int h, int s, int v);

typedef struct {
	double area_px;         /* pixel count */
	double cu, cv;          /* centroid, our pixel convention */
	double fill;            /* area / bounding-box area */
	int bx0, by0, bx1, by1; /* bounding box, inclusive */
} wl_blob;

typedef struct wl_blobber wl_blobber;
wl_status wl_blobber_create(wl_blobber **out, wl_err *err);
/* Thresholds window (x0,y0,w,h) of a packed RGB image with range r and
 * labels 8-connected components; keeps blobs of min_px..max_px pixels (up
 * to max).  Returns the count, -1 on allocation failure. */
int wl_blobber_find(wl_blobber *b, const uint8_t *rgb, int stride, int x0, int y0, int w, int h,
                    const wl_hsv_range *r, int min_px, int max_px, wl_blob *out, int max);
void wl_blobber_destroy(wl_blobber *b);

/* Holding a cap partly washed out by glare (capfit.c): pixels are cap (in
 * range), washed (the cap's colour cap_rgb plus white light, clipped),
 * unknown (every channel clipped) or other; the disc of radius_px is
 * placed within search_px of (cu0, cv0) where it holds the most cap and
 * washed pixels and the fewest others, leaving out the fewest cap and
 * washed ones.  Reads only inside area.  Returns 0 when nothing could be
 * fitted. */
typedef struct {
	double cu, cv; /* the disc's centre, our pixel convention */
	double score;  /* (cap + washed) / disc */
	double cap_frac, washed_frac, other_frac, unknown_frac;
} wl_capfit;
int wl_cap_fit(const uint8_t *rgb, int stride, const int area[4], const wl_hsv_range *r,
               const double cap_rgb[3], double radius_px, double cu0, double cv0, double search_px,
               wl_capfit *out);
/* The mean colour of the in-range pixels within radius_px of (cu, cv);
 * 0 when fewer than 3. */
int wl_cap_colour(const uint8_t *rgb, int stride, const int area[4], const wl_hsv_range *r, double cu,
                  double cv, double radius_px, double out[3]);

/* HSV statistics of a region (for `wakeline colours`). */
typedef struct {
	long n;
	double mean[3];            /* hue mean is circular (0-179 scale) */
	int p5[3], p50[3], p95[3]; /* percentiles; hue's taken around the circular mean */
} wl_hsv_stats;
void wl_hsv_region_stats(const uint8_t *rgb, int stride, int x0, int y0, int w, int h, const uint8_t *mask,
                         wl_hsv_stats *st);

/* ---- RAW.csv rows (the format is formats/raw.h's) ---- */

/* Appends a frame's observations as RAW.csv rows (lost ones with empty
 * pose cells): the one mapping of wl_track_obs to wl_raw_row, for track and
 * live. */
void wl_track_put_rows(wl_raw_writer *w, double t_s, int64_t frame, const wl_track_obs *obs, int n);

/* ---- quality-control pictures: the trail PNG and the overlay clip ---- */

typedef struct wl_qc wl_qc;
/* trail_png and/or overlay_mp4 (NULL: not wanted).  Sizes are coded. */
wl_status wl_qc_create(const char *trail_png, const char *overlay_mp4, const wl_calib *cal, int width_px,
                       int height_px, int rotation_deg, double fps_hint, wl_qc **out, wl_err *err);
/* Adds a frame's poses (and draws the overlay frame; needs img->rgb then). */
wl_status wl_qc_frame(wl_qc *qc, const wl_tracker *tr, const wl_track_image *img, const wl_track_obs *obs,
                      int n, wl_err *err);
/* Writes the trail PNG and closes the overlay (both atomic). */
wl_status wl_qc_finish(wl_qc *qc, wl_err *err);
void wl_qc_destroy(wl_qc *qc);

/* ---- the whole run: decoder thread -> bounded queue -> tracking thread ---- */

typedef struct {
	const char *clip;
	const char *raw_path;
	const char *trail_png;   /* NULL: none */
	const char *overlay_mp4; /* NULL: none */
	int decode_threads;      /* 0: all cores */
	int queue_frames;        /* buffers in the pool (>= 2) */
	/* warnings (a damaged clip, ids past the limit, HDR video in colour
	 * mode, a readout that the tags' shear contradicts, camera moves) and
	 * progress (stage "track": frames done of the expected frames, -1 when
	 * unknown, and the frame's time), from the tracking thread after each
	 * frame; may be NULL */
	const wl_diag *diag;
	const wl_watch_opts *watch; /* the camera watch (watch.h); NULL or not enabled: none */
} wl_track_run_opts;

typedef struct {
	int64_t frames, rows, ok_rows;
	int n_robots;
	int64_t damaged; /* frames the decoder flagged */
	wl_track_stats stats;
	int camera_checks;         /* camera watch: checks made */
	int camera_markers;        /* floor markers the calibration names (0: nothing to watch) */
	double camera_watch_cpu_s; /* CPU time the watch took */
	int camera_moves;          /* moves seen (registered again or not) */
	double suspect_from_t_s;   /* poses from here on are suspect; NaN if none */
} wl_track_summary;

/* Tracks a whole clip into RAW.csv (written atomically).  Checks the
 * options first (wl_track_opts_check). */
wl_status wl_track_run(const wl_track_run_opts *ro, const wl_track_opts *opts, const wl_calib *cal,
                       const char *cal_path, wl_track_summary *sum, wl_err *err);

#endif
