/*
 * angle.h: the one definition of pi and of angle wrapping that every module
 * uses (headings, yaw, tilt).  Headings are counter-clockwise from +x and
 * wrapped to (-pi, pi] wherever they are stored or written (DEVELOPERS.md,
 * "Conventions").  Header-only: small static inline functions.
 */
#ifndef WL_ANGLE_H
#define WL_ANGLE_H

#include <math.h>

#define WL_PI 3.14159265358979323846
#define WL_DEG (WL_PI / 180.0) /* radians per degree */

/* a wrapped to (-pi, pi]; NaN stays NaN. */
static inline double wl_wrap_pi(double a)
{
	if (!isfinite(a))
		return a;
	a = fmod(a, 2.0 * WL_PI);
	if (a <= -WL_PI)
		a += 2.0 * WL_PI;
	else if (a > WL_PI)
		a -= 2.0 * WL_PI;
	return a;
}

/* a wrapped to [0, 2 pi); NaN stays NaN. */
static inline double wl_wrap_2pi(double a)
{
	if (!isfinite(a))
		return a;
	a = fmod(a, 2.0 * WL_PI);
	if (a < 0)
		a += 2.0 * WL_PI;
	if (a >= 2.0 * WL_PI)
		a = 0;
	return a;
}

#endif
