/*
 * measure.h: stage 5 of the pipeline (clean -> measure -> report).  Pure
 * functions over one cleaned track segment: circle fits, the curvature and
 * its uncertainty, path measures and the yaw / sway oscillation (circle.c,
 * run.c); and the stage's driver (driver.c), which streams CLEAN.csv one
 * segment at a time through formats/clean.h into the runs of SUMMARY.json
 * (formats/summary.h), the only part that reads a file.
 *
 * Units are SI and in the names (x_m, t_s, heading_rad); angles that reach
 * the user are in degrees and say so (arc_deg).  Signs follow the tank frame
 * (right-handed x, y seen from above): positive curvature and turning
 * radius for counter-clockwise travel.
 *
 * Ownership: nothing here allocates anything the caller must free; every
 * function that needs scratch memory frees it before returning.  Inputs are
 * borrowed for the duration of the call.
 *
 * Errors: WL_EINVAL for too few usable points or non-finite input,
 * WL_ENOMEM when scratch memory cannot be had.  A fit that is numerically
 * impossible (all points collinear for the algebraic fits) is WL_EINVAL with
 * a message saying so.  Methods and citations: docs/measure.md.
 */
#ifndef WL_MEASURE_H
#define WL_MEASURE_H

#include <stddef.h>

#include "calib/calib.h"
#include "core/diag.h"
#include "core/err.h"
#include "formats/rawside.h"
#include "formats/summary.h"

/* ---- circle fits ------------------------------------------------------ */

typedef struct {
	double cx_m, cy_m; /* centre */
	double r_m;        /* radius, > 0 */
} wl_circle;

/* Algebraic fits over n >= 3 points (NaN points are not allowed here).
 * Kasa (1976): least squares of x²+y²+Dx+Ey+F.  Pratt (1987) and Taubin
 * (1991): the gradient-weighted algebraic fits, solved by Newton's method
 * on their characteristic polynomials as formulated by Chernov (2010,
 * "Circular and linear regression", §5).  WL_EINVAL when the points are
 * collinear to working precision (no finite circle). */
wl_status wl_measure_fit_kasa(const double *x_m, const double *y_m, size_t n, wl_circle *out, wl_err *err);
wl_status wl_measure_fit_pratt(const double *x_m, const double *y_m, size_t n, wl_circle *out, wl_err *err);
wl_status wl_measure_fit_taubin(const double *x_m, const double *y_m, size_t n, wl_circle *out, wl_err *err);

/* The geometric (orthogonal-distance) fit, minimising the sum of squared
 * distances from the points to the circle.  It is parametrised by signed
 * curvature, so that a straight line (curvature 0) is an ordinary point of
 * the parameter space (Karimäki 1991, Nucl. Instr. Meth. A305:187):
 *   kappa_per_m  signed curvature; > 0 when the points, in index order, go
 *                counter-clockwise about the centre
 *   d_m, phi_rad the circle passes at signed distance d_m from the reference
 *                point (ref_x_m, ref_y_m), travelling in direction phi_rad
 *                there; the centre lies at ref + (d + 1/kappa)·(-sin phi, cos phi)
 * Started from the Taubin fit (or from the total-least-squares line when
 * Taubin finds none) and refined by Levenberg-Marquardt (Marquardt 1963). */
typedef struct {
	double kappa_per_m, d_m, phi_rad;
	double ref_x_m, ref_y_m;
	double cx_m, cy_m, r_m; /* NaN / INFINITY when kappa_per_m == 0 */
	double rms_m;           /* sqrt(sum of squared distances to the circle / n) */
	int iterations;
	/* only from wl_measure_fit_geometric_sway, else 0: the lateral offset
	 * (left positive) a·cos(2π f t) + b·sin(2π f t) fitted with the circle */
	double sway_freq_hz, sway_a_m, sway_b_m;
} wl_geofit;

wl_status wl_measure_fit_geometric(const double *x_m, const double *y_m, size_t n, wl_geofit *out,
                                   wl_err *err);

/* The same circle fitted jointly with a sinusoidal lateral sway of known
 * frequency (t_s absolute times, a0/b0 start values of its coefficients):
 * the mean path of a body that sways as it goes.  Over a segment that does
 * not hold a whole number of sway periods, the sway left in the residuals
 * would pull the circle; fitting it removes that pull and leaves residuals
 * the uncertainty estimate can treat as noise. */
wl_status wl_measure_fit_geometric_sway(const double *x_m, const double *y_m, const double *t_s, size_t n,
                                        double freq_hz, double a0_m, double b0_m, wl_geofit *out,
                                        wl_err *err);

/* Signed distance of a point from the fitted circle (or line), positive to
 * the left of the direction of travel (the fitted sway is not subtracted). */
double wl_measure_geofit_offset(const wl_geofit *f, double x_m, double y_m);

/* Standard error of kappa_per_m that holds for autocorrelated residuals:
 * the sandwich (JᵀJ)⁻¹ (Jᵀ Γ J) (JᵀJ)⁻¹ of the fit's Jacobian J, with Γ the
 * covariance of an autoregressive model of the time-ordered residuals
 * (Yule-Walker by the Levinson-Durbin recursion, order up to 12 chosen by
 * Akaike's criterion; Akaike 1969, Berk 1974 for the spectral estimate).
 * Jᵀ Γ J is computed exactly through the model's innovations filter.  The
 * points must be in time order (and evenly spaced in time, as the model's
 * lags are rows); t_s is needed only for a fit with sway.  *ar_order_out (may
 * be NULL) receives the order used; 0 means white residuals, where the
 * result is the classical σ²(JᵀJ)⁻¹. */
wl_status wl_measure_curvature_se(const double *x_m, const double *y_m, const double *t_s, size_t n,
                                  const wl_geofit *f, double *se_per_m, int *ar_order_out, wl_err *err);

/* Total angle in radians swept about (cx, cy) by the path in index order,
 * signed (counter-clockwise positive). */
double wl_measure_swept_angle(const double *x_m, const double *y_m, size_t n, double cx_m, double cy_m);

/* ---- oscillation ------------------------------------------------------- */

typedef struct {
	double freq_hz;   /* NaN when no oscillation could be estimated */
	double amp;       /* sine amplitude, in the unit of the input */
	double phase_rad; /* v ≈ mean + amp·sin(2π f t + phase) */
	double r2;        /* fraction of the variance the sine explains */
} wl_osc;

/* Dominant sinusoid of v(t) (t in time order, uneven steps allowed, NaN
 * samples skipped): a Hann-windowed periodogram of v resampled on an even
 * grid locates the peak in [fmin_hz, fmax_hz]; a least-squares sine fit on
 * the original samples, jointly with a quadratic trend in t, then refines
 * the frequency (golden-section search of the residual sum of squares
 * within half a bin) and gives amplitude and phase.  v should already be
 * detrended (for the periodogram); the joint trend keeps the removal of
 * the trend from taking part of the sine.  WL_EINVAL when fewer than 16
 * usable samples or the band is empty. */
wl_status wl_measure_oscillation(const double *t_s, const double *v, size_t n, double fmin_hz, double fmax_hz,
                                 wl_osc *out, wl_err *err);

/* The Hann-windowed periodogram that wl_measure_oscillation searches for
 * its start (v resampled on an even grid of its n usable samples, mean
 * removed, zero-padded to a power of two >= 2n): power, in squared input
 * units up to a constant factor, at frequencies k / (nfft dt), k = 1 ..
 * nfft/2, at most cap bins into f_hz and power; *nbins says how many.  For
 * plots.  WL_EINVAL when fewer than 16 usable samples. */
wl_status wl_measure_periodogram(const double *t_s, const double *v, size_t n, double *f_hz, double *power,
                                 size_t cap, size_t *nbins, wl_err *err);

/* ---- one run ------------------------------------------------------------ */

/* One segment of one robot, rows in time order.  heading_rad, speed_mps and
 * yaw_rate_radps may be NULL or hold NaN where unknown; x_m/y_m NaN rows
 * are left out of the fits.  measured[i] != 0 for rows the tracker saw. */
typedef struct {
	size_t n;
	const double *t_s, *x_m, *y_m, *heading_rad, *speed_mps, *yaw_rate_radps;
	const unsigned char *measured;
	/* the detections' own headings (CLEAN.csv heading_meas_rad), NaN where
	 * none; may be NULL.  When they cover at least half the rows with a
	 * heading, the yaw oscillation is fitted to them (the smoothed heading
	 * attenuates oscillations near the smoother's bandwidth). */
	const double *heading_meas_rad;
} wl_measure_input;

typedef struct {
	double min_arc_deg;     /* straight below this arc; default 5 */
	double body_diameter_m; /* NaN: radius_body_diameters not computed */
	double osc_fmin_hz;     /* NaN: 3 cycles per segment, at least 0.05 Hz */
	double osc_fmax_hz;     /* NaN: 0.8 × the Nyquist frequency */
} wl_measure_opts;

void wl_measure_opts_init(wl_measure_opts *o);

/* The measures of one run: the type SUMMARY.json carries (formats/summary.h).
 * Every value is NaN when it could not be computed (too few points, no
 * heading column...); the file has null there. */
typedef wl_summary_measures wl_measure_result;

/* Computes every measure of one run, with each interval's measure the fit's
 * standard error (the "fit" entry of the budget; wl_measure_budget adds the
 * systematic sources).  Fails (WL_EINVAL) only when fewer than
 * 5 rows have a position or times are not increasing; weaker data gives NaN
 * fields instead. */
wl_status wl_measure_run(const wl_measure_input *in, const wl_measure_opts *opt, wl_measure_result *out,
                         wl_err *err);

/* wl_measure_run, and also the series behind the oscillation measures, for
 * plots: yaw_rad[i], the heading about the mean path (the tangent of the
 * fitted circle, or the line when straight) unwrapped and detrended as the
 * yaw measures analyse it, and offset_m[i], the signed distance of row i
 * from the fitted circle or line (left of travel positive; the circle's
 * residual, sway included).  Both hold in->n values, NaN where unknown
 * (every value when the circle could not be fitted). */
wl_status wl_measure_run_series(const wl_measure_input *in, const wl_measure_opts *opt,
                                wl_measure_result *out, double *yaw_rad, double *offset_m, wl_err *err);
/* Sets every 95% interval from the budget's totals (curvature_se_per_m
 * becomes the curvature's total): value ± 1.96 total_se, the radius's the
 * curvature's inverted. */
void wl_measure_set_intervals(wl_measure_result *r);

/* ---- the uncertainty budget --------------------------------------------- */

/* The tolerances of what the lab gave, as standard uncertainties (defaults
 * in docs/measure.md): the marker plane's height (a robot's own, from
 * ROBOTS.csv, overrides it), the water depth, a focal length assumed from
 * --hfov-deg (relative), a principal point assumed at the image centre
 * (fraction of the width). */
typedef struct {
	double plane_height_sd_m, water_depth_sd_m, focal_sd_frac, principal_sd_frac;
	int calib_jackknife; /* 1 (default): the calibration's own uncertainty by the jackknife */
} wl_measure_tolerances;

void wl_measure_tolerances_init(wl_measure_tolerances *t);

/* The camera part of the budget: for each uncertain input (a direction), how
 * a tank position on a marker plane moves when the input moves by one
 * standard deviation, through the camera model (sysmodel.c).  Created from
 * the calibration the positions came from; freed with
 * wl_measure_sys_destroy. */
typedef struct wl_measure_sys wl_measure_sys;

#define WL_SYS_MAX_DIR 24

wl_status wl_measure_sys_create(const wl_calib *cal, const wl_measure_tolerances *tol, wl_measure_sys **out,
                                wl_err *err);
void wl_measure_sys_destroy(wl_measure_sys *s);
int wl_measure_sys_ndir(const wl_measure_sys *s);
wl_budget_source wl_measure_sys_source(const wl_measure_sys *s, int k);
const char *wl_measure_sys_name(const wl_measure_sys *s, int k);
double wl_measure_sys_sd(const wl_measure_sys *s, int k);
/* The displacements (dx[k], dy[k], metres) of the tank point (x, y) on the
 * plane z for every direction k.  Returns 0 when the point is outside the
 * camera model. */
int wl_measure_sys_displace(const wl_measure_sys *s, double x_m, double y_m, double z_m, double *dx,
                            double *dy);

/* Adds the systematic sources to a run's budget: every direction of sys
 * moves the run's positions (and, through the map's local Jacobian, its
 * speeds and headings) by ± one standard deviation, the run is measured
 * again, and half the difference is that direction's effect on each
 * measure (first order, central differences); directions of one source add
 * in quadrature, sources too, the fit's included.  plane_z_m is the robot's
 * marker plane; plane_sd_m its tolerance (NaN: the one sys was made with).
 * Then the intervals are set from the totals and the straight rule is
 * applied to the total curvature interval.  r must come from wl_measure_run
 * on the same input. */
wl_status wl_measure_budget(const wl_measure_input *in, const wl_measure_opts *opt, const wl_measure_sys *sys,
                            double plane_z_m, double plane_sd_m, wl_measure_result *r, wl_err *err);

/* ---- the verdict ---------------------------------------------------------- */

/* What the verdict needs beyond a run's measures (verdict.c). */
typedef struct {
	double outlier_share; /* the run's rows rejected as outliers / its rows; NaN: unknown */
	double trim_share;    /* the robot's track cut at its start / the track's length; NaN: unknown */
	int not_settled;      /* the clean stage found no steady motion */
	int widened;          /* the clean stage widened its noise model (recorded, not a reason:
	                       * a tracker's slowly varying errors often make it) */
	double noise_pos_m;   /* the track's position noise; NaN: unknown (1 mm is assumed) */
	/* the camera watch's record of the clip (CLEAN.json "camera"; borrowed,
	 * NULL: unknown) and the run's span [t0_s, t1_s] it is judged over */
	const wl_rawside *camera;
	double t0_s, t1_s;
} wl_verdict_input;

void wl_verdict_input_init(wl_verdict_input *v);

/* 1 when move i of the watch's record c was registered again and held (its
 * new pose fits the floor markers to within twice the watch's threshold),
 * and t_s (NaN: any) lies in its bracket (last_still_t_s, t_s]: a pose there
 * was computed with the old pose, so the clean stage's rejecting it as an
 * outlier says nothing about the track (the verdict leaves such rows out of
 * its outlier share). */
int wl_verdict_move_held(const wl_rawside *c, int i, double t_s);

/* Sets r->verdict and its reasons from the run's measures, its budget and v
 * (rules and thresholds in docs/measure.md, "Verdict"). */
void wl_measure_verdict(const wl_verdict_input *v, wl_measure_result *r);

/* ---- the stage: CLEAN.csv -> the runs of SUMMARY.json -------------------- */

/* A robot's own marker plane and its tolerance (ROBOTS.csv). */
typedef struct {
	long id;
	double plane_height_m;    /* NaN: the default */
	double plane_height_sd_m; /* NaN: the default */
} wl_measure_plane;

typedef struct {
	wl_measure_opts run;       /* for every run */
	double commanded_period_s; /* NaN: none; recorded and compared with the yaw period */
	const wl_diag *diag;       /* a segment too short to measure is a warning */
	/* the budget's camera part (NULL: the budget holds the fit alone) and the
	 * marker planes: a robot's own, else plane_height_m (NaN: the
	 * calibration's), with their tolerances (NaN: the one sys was made with) */
	const wl_measure_sys *sys;
	const wl_calib *cal; /* the calibration sys was made from */
	double plane_height_m, plane_height_sd_m;
	const wl_measure_plane *planes;
	size_t nplanes;
	/* CLEAN.json, for the verdict (noise, widening, settling); NULL: none */
	const char *clean_sidecar;
} wl_measure_clean_opts;

void wl_measure_clean_opts_init(wl_measure_clean_opts *o);

/* Measures every analysed segment (segment >= 0) of every robot in a
 * CLEAN.csv, streaming: memory holds the open segment of each robot, not the
 * file.  Each robot's rows must be in time order and each of its segments
 * one block of rows.  *out (initialised here, released by the caller with
 * wl_summary_release, also after a failure) gets one run per robot per
 * segment sorted by id and segment, the longest segment of each robot marked
 * headline.  No measurable segment at all is an error (WL_EFORMAT). */
wl_status wl_measure_clean(const char *clean_path, const wl_measure_clean_opts *o, wl_summary *out,
                           wl_err *err);
/* Same over a buffer (name is used in messages). */
wl_status wl_measure_clean_mem(const char *name, const char *data, size_t len, const wl_measure_clean_opts *o,
                               wl_summary *out, wl_err *err);

#endif
