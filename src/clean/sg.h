/*
 * sg.h: Savitzky-Golay weights by local least squares in t, for evenly or
 * unevenly spaced samples: the clean stage's second smoother (sg.c; used by
 * smooth.c).  Pure maths over caller-owned arrays.
 */
#ifndef WL_CLEAN_SG_H
#define WL_CLEAN_SG_H

#define WL_SG_MAX_WINDOW 101
#define WL_SG_MAX_ORDER 6

/* Weights w[0..n-1] such that sum w[i] z[i] is the deriv-th derivative at t0
 * of the least-squares polynomial of the given order through (t[i], z[i]).
 * With t = -m..m and t0 = 0 these are Savitzky & Golay's (1964) convolution
 * weights (as corrected by Steinier et al. 1972), in data order.  Returns 0
 * when the fit is singular (n <= order or repeated times). */
int wl_sg_weights(const double *t, int n, double t0, int order, int deriv, double *w);
/* Evenly spaced (unit step) weights of a centred window, in data order. */
int wl_sg_coeffs(int window, int order, int deriv, double *w);

#endif
