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

/* ---- the camera fit shared by every route ---------------------------- */

/* The camera's parameters as one vector, in this order: the rotation as a
 * Rodrigues vector, the translation (Xc = R·X + t), the focal length fx
 * (fy keeps its ratio to fx), the principal point, the distortion terms in
 * the order k1 k2 p1 p2 k3 and the water depth. */
enum {
	WL_CP_RX,
	WL_CP_RY,
	WL_CP_RZ,
	WL_CP_TX,
	WL_CP_TY,
	WL_CP_TZ,
	WL_CP_F,
	WL_CP_CX,
	WL_CP_CY,
	WL_CP_K1,
	WL_CP_K2,
	WL_CP_P1,
	WL_CP_P2,
	WL_CP_K3,
	WL_CP_WATER,
	WL_CP_N
};
#define WL_CP_POSE 0x3fu /* the six pose parameters as a wl_camfit_opts.free mask */
#define WL_CP_BIT(k) (1u << (k))

/* "rvec_x_rad" ... "t_z_m", "f_px", "cx_px", "cy_px", "k1", "k2", "p1",
 * "p2", "k3", "water_depth_m" (the names CAL.json's covariance uses);
 * wl_camparam_index is the inverse (-1 for an unknown name). */
const char *wl_camparam_name(int k);
int wl_camparam_index(const char *name);
void wl_camparam_get(const wl_camera *cam, double p[WL_CP_N]);
void wl_camparam_set(wl_camera *cam, const double p[WL_CP_N]);

typedef struct {
	unsigned free;                /* WL_CP_BIT(k) for each parameter fitted */
	double height_m, height_sd_m; /* height_sd_m > 0: prior on the camera height above the floor */
	double height_cov_sd_m;       /* > 0: the prior's deviation in the covariance (default height_sd_m) */
	double assumed_sd[WL_CP_N];   /* a fixed parameter's uncertainty (0: exact), carried into cov */
	int want_cov;                 /* compute the covariance */
} wl_camfit_opts;

typedef struct {
	int ok;
	double rms_px;   /* RMS reprojection error of the used points */
	double sigma_px; /* residual standard deviation, sqrt(SSR / (2n - p)) */
	int dof;         /* residuals minus fitted parameters */
	int n_params;    /* parameters in cov: the fitted ones, then the assumed ones */
	int param[WL_CP_N];
	double cov[WL_CP_N * WL_CP_N]; /* n_params x n_params, row-major, in the units of the names */
} wl_camfit_result;

/* Levenberg-Marquardt on the reprojection error of xyz (n×3, tank metres)
 * against uv (n×2, observed pixels, distortion included) over the
 * parameters in o->free, starting from cam; points with used[i] == 0 are
 * skipped (used may be NULL).  Projects through the water layer when
 * cam->water_depth_m > 0.  With o->height_sd_m > 0 the camera height is
 * pulled toward o->height_m with that standard deviation.  With
 * o->want_cov, res receives the covariance: σ²(JᵀJ)⁻¹ of the fitted
 * parameters (σ the residual spread), joined with the assumed ones (see
 * camfit.c).  Returns the RMS in pixels, or a negative value when the fit
 * is impossible (a point behind the camera, too few points). */
double wl_camfit(wl_camera *cam, const double *xyz, const double *uv, const int *used, int n,
                 const wl_camfit_opts *o, wl_camfit_result *res);

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
	/* how the focal length and principal point were found (WL_CALIB_ROUTE_*) */
	char route[32];
	char distortion_model[24];        /* "none", "k1", "k1k2", "k1k2k3", "k1k2p1p2", "lens" */
	int principal_assumed;            /* 1: principal point assumed (image centre or the lens's) */
	double principal_offset_mm_per_m; /* assumed principal point: position offset it can
	                                   * cause per metre of plane height (see report) */
	/* uncertainty: covariance of the camera parameters (names: wl_camparam_name) */
	double sigma_px; /* residual standard deviation of the fit */
	int n_cov;       /* 0: none */
	int cov_param[WL_CP_N];
	double cov[WL_CP_N * WL_CP_N]; /* n_cov x n_cov, row-major */
	/* tolerances of the user's inputs, read as standard uncertainties (0: not given) */
	double plane_height_sd_m, water_depth_sd_m, camera_height_sd_m;
	double camera_height_given_m; /* the measured (or tag-derived) camera height; 0 if none */
	double principal_sd_px;       /* assumed principal point's uncertainty (0: fitted or lens) */
	/* added by the calibration stage: */
	int n_points; /* correspondences and their residuals */
	wl_calib_point points[WL_CALIB_MAX_POINTS];
	/* rolling shutter: this camera's top-to-bottom readout of the coded
	 * rows in ms (0: global shutter or unknown); CAL.json "readout_ms",
	 * written when > 0, the tracker's default for --readout-ms */
	double readout_ms;
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

/* ---- uncertainty: a plane point's tank position vs the calibration ---- */

#define WL_CALIB_JAC_MAX (WL_CP_N + 2)

/* The partial derivatives of a pixel's position on a plane with respect to
 * the calibration's uncertain inputs: first the parameters of CAL.json's
 * covariance (in its order, names from wl_camparam_name), then
 * "plane_height_m" (the plane's height), then "water_depth_m" when there is
 * water and the covariance does not hold it already.  sd[k] is the input's
 * own standard uncertainty where it is not in the covariance (the
 * tolerances of the plane height and water depth), else 0. */
typedef struct {
	int n;
	int n_cov; /* the first n_cov entries follow cal->cov */
	char name[WL_CALIB_JAC_MAX][24];
	double dx[WL_CALIB_JAC_MAX], dy[WL_CALIB_JAC_MAX]; /* metres per unit of the input */
	double sd[WL_CALIB_JAC_MAX];
} wl_calib_jacobian;

/* Fills J for pixel (u, v) (the calibration's orientation, distortion
 * included) on the plane z_m, by central differences through the full
 * camera model (refraction included): the first-order propagation of issue
 * 12's uncertainty budget is cov(x, y) = Jc C Jcᵀ + Σ_k sd_k² j_k j_kᵀ.
 * WL_ECALIB when the pixel does not meet the plane. */
wl_status wl_calib_position_jacobian(const wl_calib *cal, double u, double v, double z_m,
                                     wl_calib_jacobian *J, wl_err *err);

/* That propagation: the 2×2 covariance [xx, xy, yx, yy] (m²) of the
 * position of pixel (u, v) on plane z_m from the calibration's covariance
 * and the tolerances of the plane height and water depth. */
wl_status wl_calib_position_cov(const wl_calib *cal, double u, double v, double z_m, double cov[4],
                                wl_err *err);

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
	/* what the lab measured, and how well (standard uncertainties; 0: default) */
	double camera_height_m;        /* > 0: the lens's height above the floor (tape) */
	double camera_height_sd_m;     /* its tolerance (default 0.01 m) */
	double camera_height_fit_sd_m; /* > 0: weigh the height by this in the fit, and by
	                                * camera_height_sd_m in the covariance only */
	double plane_height_sd_m;      /* tolerance of plane_height_m, recorded (default 0.002 m) */
	double water_depth_sd_m;       /* tolerance of water_depth_m (default 0.003 m) */
	double principal_sd_px;   /* an assumed principal point's uncertainty (default 2% of the width) */
	int no_distortion;        /* 1: do not estimate distortion from the points */
	const char *height_route; /* route name when camera_height_m came from elsewhere
	                           * ("robot_tags"); NULL: the tape measure */
	const wl_diag
	        *diag; /* warnings: points left out or far off, an undetermined focal length (may be NULL) */
} wl_calib_opts;

/* Routes (wl_calib.route): where the focal length and principal point came
 * from.  See docs/calibrate.md for what each needs and gives. */
#define WL_CALIB_ROUTE_LENS "lens"             /* LENS.json */
#define WL_CALIB_ROUTE_OBLIQUE "oblique"       /* f from the floor homography (tilt >= 10 deg) */
#define WL_CALIB_ROUTE_HEIGHT "camera_height"  /* f from the homography and the measured height */
#define WL_CALIB_ROUTE_TAGS "robot_tags"       /* the same, the height from the robots' tags */
#define WL_CALIB_ROUTE_RAISED "raised_markers" /* f and principal point from points at 2+ heights */
#define WL_CALIB_ROUTE_HFOV "hfov"             /* f from the given field of view */

#define WL_CALIB_MAX_MODELS 6

/* One distortion model tried on the calibration's own points. */
typedef struct {
	char name[24];     /* "none", "k1", "k1k2", "k1k2k3", "k1k2p1p2" */
	int n_terms;       /* distortion terms fitted */
	double fit_rms_px; /* fitted to every point */
	double cv_rms_px;  /* leave-one-marker-out: each marker predicted by a fit to the others */
} wl_calib_model;

typedef struct {
	int n_used;                 /* points in the final fit */
	int outlier;                /* index of the point left out, -1 if none */
	double outlier_residual_px; /* its distance from the fit of the others */
	int worst;                  /* index of the largest residual among the used */
	int focal_determined;       /* 1: the homography gave f (oblique view) */
	double focal_from_h_px;     /* that estimate (0 when not determined) */
	double focal_spread;        /* relative jackknife spread of it (0 if n < 7) */
	double height_m, tilt_deg;  /* camera above the floor, optical axis from nadir */
	char route_note[320];       /* the route and what it means for accuracy */
	char distortion_note[320];  /* the distortion model chosen and why */
	int n_models;               /* distortion models compared (0: none estimated) */
	wl_calib_model models[WL_CALIB_MAX_MODELS];
	double principal_offset_mm; /* assumed principal point: the offset it can cause at the
	                             * default plane height (see wl_calib.principal_offset_mm_per_m) */
	double principal_cx_sd_px, principal_cy_sd_px; /* fitted principal point: its uncertainty */
	const wl_diag *diag;                           /* during the call: the options' */
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

/* ---- the camera height from the robots' tags ------------------------ */

/* One sighting of a robot's tag in a frame: its four corners (pixels in
 * the calibration's orientation, any order around the square), the height
 * of the tag's plane above the floor and the printed side of its black
 * square. */
typedef struct {
	double p[4][2];
	double plane_height_m;
	double size_m;
} wl_tag_sighting;

typedef struct {
	int n_sightings, n_used; /* given, and kept after the outlier cut */
	double height_m;         /* the camera height the tags imply */
	double sd_m;             /* its standard uncertainty, all sources */
	double sd_stat_m;        /* from the spread of the sightings (standard error) */
	double sd_plane_m;       /* from the plane height's tolerance */
	double sd_size_m;        /* from the printed size's tolerance */
	double plane_scale;      /* tag side on its plane / the same pixels on the floor (1 - h/Z) */
} wl_tagscale;

/* Calibrates as wl_calib_solve, with the camera height measured from the
 * robots' tags: a tag of known printed size seen on a plane of known height
 * gives the scale between that plane and the floor, (Z - h) / Z, hence the
 * camera height Z; averaged over the sightings of a run.  The height then
 * enters the fit as for a tape-measured one (route "robot_tags").  size_sd_m
 * is the printed size's tolerance (0: 0.2 mm).  WL_ECALIB when fewer than 10
 * sightings are usable or they do not determine the height. */
wl_status wl_calib_solve_tags(const wl_calib_point *pts, int n, const wl_calib_opts *opts,
                              const wl_tag_sighting *s, int ns, double size_sd_m, wl_calib *cal,
                              wl_calib_report *rep, wl_tagscale *ts, wl_err *err);

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
