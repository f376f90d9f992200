/*
 * kin.h: a kinematic Kalman filter and Rauch-Tung-Striebel smoother for one
 * axis (constant velocity or constant acceleration), with exact uneven time
 * steps: the clean stage's default smoother (kin.c; used by smooth.c).
 * Pure maths over caller-owned arrays; nothing allocated, nothing printed.
 */
#ifndef WL_CLEAN_KIN_H
#define WL_CLEAN_KIN_H

#include <stddef.h>

/* One axis of a kinematic model: state (p, v) (dim 2, constant velocity) or
 * (p, v, a) (dim 3, constant acceleration), measurement p + white noise of
 * variance r.  Process noise is continuous white acceleration (dim 2) or
 * jerk (dim 3) of spectral density q, integrated exactly over each dt:
 *   dim 2: Q = q [dt^3/3 dt^2/2; dt^2/2 dt]
 *   dim 3: Q = q [dt^5/20 dt^4/8 dt^3/6; dt^4/8 dt^3/3 dt^2/2; dt^3/6 dt^2/2 dt]
 * Angular axes take innovations modulo 2 pi (the state is unwrapped). */
typedef struct {
	int dim;      /* 2 or 3 */
	double q;     /* process noise spectral density (units^2 / s^(2 dim - 1)) */
	double r;     /* measurement variance (units^2) */
	int angular;  /* 1: innovation wrapped to (-pi, pi] */
	double P0[3]; /* prior variances of p, v, a at a track's first sample */
} wl_kin_cfg;

/* Per-sample storage of the filter and smoother (the caller allocates n). */
typedef struct {
	double xp[3], Pp[9]; /* predicted (prior) at this sample */
	double xs[3], Ps[9]; /* filtered, then smoothed after wl_kin_smooth */
	double nu, S;        /* innovation and its variance (NaN when none) */
} wl_kin_step;

/* Filters and smooths one axis over n samples at times t (strictly
 * increasing).  z[i] NaN means no measurement (predicted only).  The prior
 * at t[0] has mean (first finite z, 0, 0) and variances cfg->P0.  Returns the
 * log-likelihood of the innovations in *loglik (may be NULL).  Returns 0 if a
 * covariance became singular.  (Rauch, Tung & Striebel 1965.) */
int wl_kin_smooth(const wl_kin_cfg *cfg, size_t n, const double *t, const double *z, wl_kin_step *st,
                  double *loglik);

/* Lower-level steps used by wl_kin_smooth and by the multi-axis gating in
 * clean.c: prior at sample 0, predict from i-1 to i, update, smooth. */
void wl_kin_start(const wl_kin_cfg *cfg, double z0, wl_kin_step *s0);
void wl_kin_predict(const wl_kin_cfg *cfg, const wl_kin_step *prev, double dt, wl_kin_step *cur);
/* Innovation of z at cur (wrapped for angular axes) and its variance. */
void wl_kin_innov(const wl_kin_cfg *cfg, const wl_kin_step *cur, double z, double *nu, double *S);
void wl_kin_update(const wl_kin_cfg *cfg, wl_kin_step *cur, double nu, double S);
/* Two axes with the same model, times, measurement variances and left-out
 * detections (x and y of one robot) have the same covariances: the second
 * axis's step takes them from its twin (the first axis's step at the same
 * sample, already predicted or updated) and only its mean is computed.
 * Bit for bit what wl_kin_predict and wl_kin_update give. */
void wl_kin_predict_shared(const wl_kin_cfg *cfg, const wl_kin_step *prev, double dt, const wl_kin_step *twin,
                           wl_kin_step *cur);
void wl_kin_update_shared(const wl_kin_cfg *cfg, wl_kin_step *cur, double nu, double S,
                          const wl_kin_step *twin);
/* Skips the update (no measurement or rejected): filtered = predicted. */
void wl_kin_skip(const wl_kin_cfg *cfg, wl_kin_step *cur);
/* Backward pass over st[0..n-1]; t as above.  Returns 0 when singular. */
int wl_kin_backward(const wl_kin_cfg *cfg, size_t n, const double *t, wl_kin_step *st);
/* The backward pass of st and, with the same gains, of its twin axis
 * (NULL: none) whose covariances equal st's (see wl_kin_predict_shared). */
int wl_kin_backward2(const wl_kin_cfg *cfg, size_t n, const double *t, wl_kin_step *st, wl_kin_step *twin);

#endif
