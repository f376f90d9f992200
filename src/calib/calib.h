/*
 * calib.h: calibration, the second stage: floor markers (or hand-picked
 * points) -> homography and a full camera model over the tank, lens
 * intrinsics, plane heights and the water model; CAL.json load/save.
 *
 * Ownership: wl_calib is plain data (fixed arrays, nothing on the heap);
 * wl_calib_init sets defaults, wl_calib_release clears it (kept so that a
 * later heap member needs no change in callers).  Copy it freely.
 *
 * Units: metres in the tank frame (floor z = 0, z up), pixels in the
 * calibration's orientation (coded or displayed, see `displayed`), with the
 * centre of the top-left pixel at (0, 0).
 *
 * The maths (second half of this header) is pure: no I/O, double precision.
 */
#ifndef WL_CALIB_H
#define WL_CALIB_H

#include "core/camera.h"
#include "core/diag.h"
#include "core/err.h"
#include "formats/cal.h" /* wl_calib_point, the shared keys of CAL.json */

#define WL_CALIB_MAX_OUTLINE WL_CAL_MAX_OUTLINE
#define WL_CALIB_MAX_POINTS WL_CAL_MAX_POINTS

typedef struct {
	wl_camera cam;         /* intrinsics, distortion, pose, water layer */
	int displayed;         /* 1: pixels are displayed (rotation applied), 0: coded */
	int rotation_deg;      /* the clip's display rotation when calibrated */
	double H_px_to_m[9];   /* floor-plane homography, pixels -> metres (row-major) */
	double plane_height_m; /* default height of the tracked marker plane above the floor */
	double rms_px, rms_mm; /* reprojection quality */
	int n_outline;         /* tank outline polygon in floor metres, counter-clockwise */
	double outline_m[WL_CALIB_MAX_OUTLINE][2];
	char intrinsics_source[32]; /* "lens", "homography", "hfov", "points3d" */
	char source[1024];          /* the calibrated clip or image */
	/* added by the calibration stage: */
	int n_points; /* correspondences and their residuals */
	wl_calib_point points[WL_CALIB_MAX_POINTS];
	char created_utc[32];  /* "2026-12-02T03:04:05Z"; filled by save when empty */
	char tool_version[64]; /* the wakeline version that wrote the file (on load) */
	char sha256_hex[65];   /* SHA-256 of the CAL.json it was loaded from ("" otherwise) */
} wl_calib;

void wl_calib_init(wl_calib *cal);
void wl_calib_release(wl_calib *cal);

/* Loads / saves CAL.json (saving is atomic).  Load errors name the file and
 * the key; a loaded calibration has been checked for consistency (positive
 * focal lengths, an orthonormal rotation, a camera above the floor). */
wl_status wl_calib_load(const char *path, wl_calib *cal, wl_err *err);
wl_status wl_calib_save(const char *path, const wl_calib *cal, wl_err *err);

/* Maps a pixel (in the calibration's orientation) to the plane at height
 * z_m above the floor, through the full camera model (distortion removed,
 * refraction when z_m is under water).  Returns 0 outside the model. */
int wl_calib_pixel_to_plane(const wl_calib *cal, double u, double v, double z_m, double *x_m, double *y_m);

/* Refuses a calibration for a clip of another size or orientation, with a
 * message that names both. */
wl_status wl_calib_check_clip(const wl_calib *cal, const char *cal_path, int width_px, int height_px,
                              int displayed, wl_err *err);

/* Camera height above the floor (m) and tilt of the optical axis from
 * nadir (degrees) of a calibration's camera. */
double wl_calib_camera_height_m(const wl_calib *cal);
double wl_calib_camera_tilt_deg(const wl_calib *cal);

/* ---- solving: correspondences -> wl_calib -------------------------- */

typedef struct {
	int width_px, height_px; /* the image the pixels belong to */
	const wl_camera *lens;   /* known intrinsics + distortion (LENS.json), or NULL */
	double hfov_deg;         /* > 0: horizontal field of view to fall back on */
	double water_depth_m;    /* > 0: the floor lies under this much water */
	double water_index;      /* refractive index (WL_WATER_INDEX) */
	double plane_height_m;   /* default tracked plane height to record */
	int displayed, rotation_deg;
	double outlier_px; /* leave-one-out threshold (default 3 px when 0) */
	const wl_diag
	        *diag; /* warnings: points left out or far off, an undetermined focal length (may be NULL) */
} wl_calib_opts;

typedef struct {
	int n_used;                 /* points in the final fit */
	int outlier;                /* index of the point left out, -1 if none */
	double outlier_residual_px; /* its distance from the fit of the others */
	int worst;                  /* index of the largest residual among the used */
	int focal_determined;       /* 1: the homography gave f (oblique view) */
	double focal_from_h_px;     /* that estimate (0 when not determined) */
	double focal_spread;        /* relative jackknife spread of it (0 if n < 7) */
	double height_m, tilt_deg;  /* camera above the floor, optical axis from nadir */
	const wl_diag *diag;        /* during the call: the options' */
} wl_calib_report;

/* Calibrates from n >= 4 correspondences: normalised DLT homography and
 * Levenberg-Marquardt refinement, one outlier left out when n >= 6, the
 * intrinsics (opts->lens, else f from the homography when the view is
 * oblique enough, else opts->hfov_deg, else WL_ECALIB saying what is
 * needed), the pose (refined by Levenberg-Marquardt through the water model
 * when opts->water_depth_m > 0), and residuals.  Points with z_m != 0 are
 * used as 3-D points.  cal is initialised here; warnings go to opts->diag. */
wl_status wl_calib_solve(const wl_calib_point *pts, int n, const wl_calib_opts *opts, wl_calib *cal,
                         wl_calib_report *rep, wl_err *err);

/* ---- input tables and markers --------------------------------------- */

/* One floor marker of a layout.  size_m: side of the tag's black square
 * (0: unknown, only the centre is used); yaw_rad: counter-clockwise turn
 * of the printed tag's "right" direction from tank +x. */
typedef struct {
	long id;
	double x_m, y_m, z_m, size_m, yaw_rad;
	long line; /* line in the layout file */
} wl_calib_marker;

/* Reads POINTS.csv (header u_px,v_px,x_m,y_m and optional z_m, id).
 * Errors name the file and line; fewer than 4 rows is an error. */
wl_status wl_calib_read_points(const char *path, wl_calib_point *pts, int max, int *n, wl_err *err);

/* Reads LAYOUT.csv (header marker_id,x_m,y_m and optional z_m, size_m,
 * yaw_rad).  Errors name the file and line: duplicate ids, cells that are
 * not numbers, fewer than 4 rows. */
wl_status wl_calib_read_layout(const char *path, wl_calib_marker *marks, int max, int *n, wl_err *err);

/* The four tank positions of a marker's corners, in the order the tag
 * detector reports them (see detect.c): for yaw 0, (-s/2,-s/2),
 * (+s/2,-s/2), (+s/2,+s/2), (-s/2,+s/2) about the centre. */
void wl_calib_marker_corners(const wl_calib_marker *m, double xy[4][2]);

/* ---- the maths ------------------------------------------------------ */

/* Normalised DLT (Hartley 1997; Hartley & Zisserman, Alg. 4.2): H maps
 * src (n×2, row-major) to dst (n×2), n >= 4.  WL_ECALIB for fewer points,
 * a degenerate configuration or a singular result. */
wl_status wl_homography_dlt(const double *src, const double *dst, int n, double H[9], wl_err *err);

/* Levenberg-Marquardt on the transfer error sum |dst - H(src)|^2 (the
 * error in dst's units).  Returns the RMS after refinement. */
double wl_homography_refine(const double *src, const double *dst, int n, double H[9]);

/* Applies H to (x, y).  Returns 0 when the point maps to infinity. */
int wl_homography_apply(const double H[9], double x, double y, double *u, double *v);

/* WL_ECALIB naming the problem when pts (n×2) cannot define a homography:
 * fewer than 4, or no 4 of them in general position (with n == 4: any
 * three collinear).  `what` names the points in the message. */
wl_status wl_homography_check_points(const double *pts, int n, const char *what, wl_err *err);

/* Indices (i, j, k) of the first nearly collinear triple among pts, 0 if
 * none.  Tolerance: triangle height below 1% of the points' spread. */
int wl_points_collinear_triple(const double *pts, int n, int ijk[3]);

/* Focal length (pixels) from a floor->image homography with square pixels
 * and the principal point at (cx, cy), by the two orthogonality
 * constraints of Zhang (2000).  Returns 0 when the view is too close to
 * nadir (or otherwise degenerate) for f to be determined. */
int wl_focal_from_homography(const double H_m_to_px[9], double cx, double cy, double *f_px);

/* Pose from a floor->image homography and known intrinsics cam->K (image
 * points undistorted): [r1 r2 t] = K^-1 H up to scale, R made orthonormal
 * by polar decomposition.  Sets cam->R, cam->t.  WL_ECALIB when the camera
 * would be below the floor (a mirrored layout). */
wl_status wl_pose_from_homography(const double H_m_to_px[9], wl_camera *cam, wl_err *err);

/* DLT of the 3x4 projection from n >= 6 non-coplanar 3-D points; gives K
 * (square pixels, principal point at the image centre imposed afterwards),
 * R and t in cam.  WL_ECALIB for too few or coplanar points. */
wl_status wl_pose_from_points3d(const double *xyz, const double *uv, int n, wl_camera *cam, wl_err *err);

enum {
	WL_POSE_FOCAL = 1 << 0, /* refine fx = fy too */
	WL_POSE_WATER = 1 << 1, /* project through the water layer (wl_camera_project_water) */
};

/* Levenberg-Marquardt on the reprojection error of xyz (n×3) against uv
 * (n×2, observed pixels with distortion) over the pose (Rodrigues vector,
 * t) and, with WL_POSE_FOCAL, the focal length.  Points with used[i] == 0
 * are skipped (used may be NULL).  Returns the RMS in pixels, or a negative
 * value when a point falls behind the camera. */
double wl_pose_refine(wl_camera *cam, const double *xyz, const double *uv, const int *used, int n,
                      unsigned flags);

/* Rotation matrix <-> Rodrigues vector. */
void wl_rodrigues(const double r[3], double R[9]);
void wl_rodrigues_inv(const double R[9], double r[3]);

#endif
