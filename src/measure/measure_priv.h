/*
 * measure_priv.h: private to src/measure/: the autocorrelation-consistent
 * covariance that the curvature's interval uses (circle.c), shared with the
 * other measures' intervals and the uncertainty budget (run.c, budget.c),
 * and the budget's cheaper runs.
 * Not part of the library's interface.
 */
#ifndef WL_MEASURE_PRIV_H
#define WL_MEASURE_PRIV_H

#include <stddef.h>

#include "measure/measure.h"

/* Jᵀ Γ J (np × np, into Om) for the n × np matrix J (row-major, rows in time
 * order), Γ the covariance of an autoregressive model of the series r
 * (Yule-Walker by the Levinson-Durbin recursion, order up to 12 chosen by
 * Akaike's criterion), computed exactly through the model's innovations
 * filter.  J is overwritten.  Returns the order, -1 when r is all zero (Om
 * is then zero). */
int wl_measure_ar_quadform(double *J, const double *r, size_t n, int np, double *Om);

/* The sandwich (JᵀJ)⁻¹ (Jᵀ Γ J) (JᵀJ)⁻¹ × n / (n - np): the covariance of a
 * least-squares fit with Jacobian J (n × np, np <= 6, overwritten) whose
 * residual series r is autocorrelated.  Returns the residual model's order,
 * 0 with C zero when r is all zero, -2 when JᵀJ is singular. */
int wl_measure_sandwich(double *J, const double *r, size_t n, int np, double *C);

/* wl_measure_run for the uncertainty budget's perturbed inputs: only the
 * values the budget differentiates (curvature, mean speed, straightness,
 * yaw oscillation's amplitude and frequency) are computed; no standard
 * error, interval or sway oscillation (about half the work of a run).  The
 * other fields of r are left as wl_measure_run's initial values or partly
 * filled: read only those five. */
wl_status wl_measure_run_values(const wl_measure_input *in, const wl_measure_opts *opt, wl_measure_result *r,
                                wl_err *err);

#endif
