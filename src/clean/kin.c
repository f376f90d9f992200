/*
 * kin.c: Kalman filter and Rauch-Tung-Striebel smoother for one axis of a
 * kinematic model (constant velocity or constant acceleration) with exact,
 * uneven time steps.  R. E. Kalman (1960); H. E. Rauch, F. Tung and
 * C. T. Striebel, "Maximum likelihood estimates of linear dynamic systems",
 * AIAA J. 3(8):1445-1450 (1965).  Process noise: continuous white noise on
 * the highest derivative, integrated over dt (Bar-Shalom, Li & Kirubarajan,
 * Estimation with Applications to Tracking and Navigation, 2001, ch. 6;
 * chapter cited from memory).
 *
 * Matrices are 3x3 row-major with stride 3; a dim-2 model uses the top-left
 * 2x2 block.  The covariance update uses the Joseph form, which stays
 * symmetric and positive when the prior is much wider than the noise.
 */
#include "clean/kin.h"

#include <math.h>
#include <string.h>

#include "core/angle.h"
#include "core/linalg.h"

#define IX(i, j) ((i)*3 + (j))

static void trans(int d, double dt, double F[9])
{
	memset(F, 0, 9 * sizeof *F);
	for (int i = 0; i < d; i++)
		F[IX(i, i)] = 1;
	F[IX(0, 1)] = dt;
	if (d == 3) {
		F[IX(0, 2)] = dt * dt / 2;
		F[IX(1, 2)] = dt;
	}
}

static void procnoise(int d, double q, double dt, double Q[9])
{
	double d2 = dt * dt, d3 = d2 * dt;
	memset(Q, 0, 9 * sizeof *Q);
	if (d == 2) {
		Q[IX(0, 0)] = q * d3 / 3;
		Q[IX(0, 1)] = Q[IX(1, 0)] = q * d2 / 2;
		Q[IX(1, 1)] = q * dt;
	} else {
		Q[IX(0, 0)] = q * d3 * d2 / 20;
		Q[IX(0, 1)] = Q[IX(1, 0)] = q * d2 * d2 / 8;
		Q[IX(0, 2)] = Q[IX(2, 0)] = q * d3 / 6;
		Q[IX(1, 1)] = q * d3 / 3;
		Q[IX(1, 2)] = Q[IX(2, 1)] = q * d2 / 2;
		Q[IX(2, 2)] = q * dt;
	}
}

/* c = a b for d x d blocks (stride 3). */
static void mul(int d, const double *a, const double *b, double *c)
{
	for (int i = 0; i < d; i++)
		for (int j = 0; j < d; j++) {
			double s = 0;
			for (int k = 0; k < d; k++)
				s += a[IX(i, k)] * b[IX(k, j)];
			c[IX(i, j)] = s;
		}
}

/* c = a b' */
static void mul_t(int d, const double *a, const double *b, double *c)
{
	for (int i = 0; i < d; i++)
		for (int j = 0; j < d; j++) {
			double s = 0;
			for (int k = 0; k < d; k++)
				s += a[IX(i, k)] * b[IX(j, k)];
			c[IX(i, j)] = s;
		}
}

static void symmetrize(int d, double *P)
{
	for (int i = 0; i < d; i++)
		for (int j = i + 1; j < d; j++)
			P[IX(i, j)] = P[IX(j, i)] = 0.5 * (P[IX(i, j)] + P[IX(j, i)]);
}

void wl_kin_start(const wl_kin_cfg *cfg, double z0, wl_kin_step *s0)
{
	memset(s0, 0, sizeof *s0);
	s0->xp[0] = z0;
	for (int i = 0; i < cfg->dim; i++)
		s0->Pp[IX(i, i)] = cfg->P0[i];
	s0->nu = s0->S = NAN;
	memcpy(s0->xs, s0->xp, sizeof s0->xs);
	memcpy(s0->Ps, s0->Pp, sizeof s0->Ps);
}

/* The mean's prediction, F x. */
static void predict_mean(int d, const double *x, double dt, double *xp)
{
	if (d == 2) {
		xp[0] = x[0] + dt * x[1];
		xp[1] = x[1];
		xp[2] = 0;
	} else {
		xp[0] = x[0] + dt * x[1] + 0.5 * dt * dt * x[2];
		xp[1] = x[1] + dt * x[2];
		xp[2] = x[2];
	}
}

void wl_kin_predict(const wl_kin_cfg *cfg, const wl_kin_step *prev, double dt, wl_kin_step *cur)
{
	int d = cfg->dim;
	double F[9], Q[9], FP[9];
	if (d == 2) {
		/* F P F' + Q written out for the constant-velocity model, the
		 * default: the generic products below cost most of clean's time */
		const double *P = prev->Ps;
		double a = P[IX(0, 0)], b = P[IX(0, 1)], c = P[IX(1, 1)], q = cfg->q, d2 = dt * dt;
		double *Pp = cur->Pp;
		predict_mean(2, prev->xs, dt, cur->xp);
		memset(Pp, 0, sizeof cur->Pp);
		Pp[IX(0, 0)] = a + dt * (2 * b + dt * c) + q * d2 * dt / 3;
		Pp[IX(0, 1)] = Pp[IX(1, 0)] = b + dt * c + q * d2 / 2;
		Pp[IX(1, 1)] = c + q * dt;
		cur->nu = cur->S = NAN;
		memcpy(cur->xs, cur->xp, sizeof cur->xs);
		memcpy(cur->Ps, cur->Pp, sizeof cur->Ps);
		return;
	}
	trans(d, dt, F);
	procnoise(d, cfg->q, dt, Q);
	memset(cur, 0, sizeof *cur);
	for (int i = 0; i < d; i++) {
		double s = 0;
		for (int k = 0; k < d; k++)
			s += F[IX(i, k)] * prev->xs[k];
		cur->xp[i] = s;
	}
	mul(d, F, prev->Ps, FP);
	mul_t(d, FP, F, cur->Pp);
	for (int i = 0; i < d; i++)
		for (int j = 0; j < d; j++)
			cur->Pp[IX(i, j)] += Q[IX(i, j)];
	symmetrize(d, cur->Pp);
	cur->nu = cur->S = NAN;
	memcpy(cur->xs, cur->xp, sizeof cur->xs);
	memcpy(cur->Ps, cur->Pp, sizeof cur->Ps);
}

void wl_kin_innov(const wl_kin_cfg *cfg, const wl_kin_step *cur, double z, double *nu, double *S)
{
	*nu = z - cur->xp[0];
	if (cfg->angular)
		*nu = wl_wrap_pi(*nu);
	*S = cur->Pp[0] + cfg->r;
}

void wl_kin_update(const wl_kin_cfg *cfg, wl_kin_step *cur, double nu, double S)
{
	int d = cfg->dim;
	double K[3], A[9], AP[9];
	for (int i = 0; i < d; i++)
		K[i] = cur->Pp[IX(i, 0)] / S;
	for (int i = 0; i < d; i++)
		cur->xs[i] = cur->xp[i] + K[i] * nu;
	if (d == 2) {
		/* the Joseph form below, written out for H = [1 0] */
		const double *P = cur->Pp;
		double a = P[IX(0, 0)], b = P[IX(0, 1)], c = P[IX(1, 1)], r = cfg->r, g = 1 - K[0];
		double *Ps = cur->Ps;
		memset(Ps, 0, sizeof cur->Ps);
		Ps[IX(0, 0)] = g * g * a + K[0] * K[0] * r;
		Ps[IX(0, 1)] = Ps[IX(1, 0)] = g * (b - K[1] * a) + K[0] * K[1] * r;
		Ps[IX(1, 1)] = K[1] * (K[1] * a - 2 * b) + c + K[1] * K[1] * r;
		cur->nu = nu;
		cur->S = S;
		return;
	}
	/* Joseph form: (I - K H) P (I - K H)' + K r K' */
	memset(A, 0, sizeof A);
	for (int i = 0; i < d; i++) {
		A[IX(i, i)] = 1;
		A[IX(i, 0)] -= K[i];
	}
	mul(d, A, cur->Pp, AP);
	mul_t(d, AP, A, cur->Ps);
	for (int i = 0; i < d; i++)
		for (int j = 0; j < d; j++)
			cur->Ps[IX(i, j)] += K[i] * cfg->r * K[j];
	symmetrize(d, cur->Ps);
	cur->nu = nu;
	cur->S = S;
}

void wl_kin_predict_shared(const wl_kin_cfg *cfg, const wl_kin_step *prev, double dt, const wl_kin_step *twin,
                           wl_kin_step *cur)
{
	predict_mean(cfg->dim, prev->xs, dt, cur->xp);
	memcpy(cur->Pp, twin->Pp, sizeof cur->Pp);
	cur->nu = cur->S = NAN;
	memcpy(cur->xs, cur->xp, sizeof cur->xs);
	memcpy(cur->Ps, cur->Pp, sizeof cur->Ps);
}

void wl_kin_update_shared(const wl_kin_cfg *cfg, wl_kin_step *cur, double nu, double S,
                          const wl_kin_step *twin)
{
	for (int i = 0; i < cfg->dim; i++)
		cur->xs[i] = cur->xp[i] + cur->Pp[IX(i, 0)] / S * nu;
	memcpy(cur->Ps, twin->Ps, sizeof cur->Ps);
	cur->nu = nu;
	cur->S = S;
}

void wl_kin_skip(const wl_kin_cfg *cfg, wl_kin_step *cur)
{
	(void)cfg;
	memcpy(cur->xs, cur->xp, sizeof cur->xs);
	memcpy(cur->Ps, cur->Pp, sizeof cur->Ps);
	cur->nu = cur->S = NAN;
}

static int inv_block(int d, const double *P, double *Pi)
{
	double a[9], ai[9];
	for (int i = 0; i < d; i++)
		for (int j = 0; j < d; j++)
			a[i * d + j] = P[IX(i, j)];
	if (!wl_invert(a, ai, d))
		return 0;
	memset(Pi, 0, 9 * sizeof *Pi);
	for (int i = 0; i < d; i++)
		for (int j = 0; j < d; j++)
			Pi[IX(i, j)] = ai[i * d + j];
	return 1;
}

int wl_kin_backward2(const wl_kin_cfg *cfg, size_t n, const double *t, wl_kin_step *st, wl_kin_step *twin)
{
	int d = cfg->dim;
	for (size_t k = n - 1; k-- > 0;) {
		wl_kin_step *a = &st[k];
		const wl_kin_step *b = &st[k + 1];
		double F[9], PF[9], Ppi[9], C[9], dP[9], CdP[9], dx[3];
		trans(d, t[k + 1] - t[k], F);
		if (!inv_block(d, b->Pp, Ppi))
			return 0;
		mul_t(d, a->Ps, F, PF); /* Ps F' */
		mul(d, PF, Ppi, C);     /* gain C = Ps F' Pp^-1 */
		for (int i = 0; i < d; i++)
			dx[i] = b->xs[i] - b->xp[i];
		for (int i = 0; i < d; i++)
			for (int j = 0; j < d; j++) {
				a->xs[i] += C[IX(i, j)] * dx[j];
				dP[IX(i, j)] = b->Ps[IX(i, j)] - b->Pp[IX(i, j)];
			}
		if (twin) {
			wl_kin_step *ta = &twin[k];
			const wl_kin_step *tb = &twin[k + 1];
			for (int i = 0; i < d; i++)
				dx[i] = tb->xs[i] - tb->xp[i];
			for (int i = 0; i < d; i++)
				for (int j = 0; j < d; j++)
					ta->xs[i] += C[IX(i, j)] * dx[j];
		}
		mul(d, C, dP, CdP);
		mul_t(d, CdP, C, dP);
		for (int i = 0; i < d; i++)
			for (int j = 0; j < d; j++)
				a->Ps[IX(i, j)] += dP[IX(i, j)];
		symmetrize(d, a->Ps);
		if (twin)
			memcpy(twin[k].Ps, a->Ps, sizeof a->Ps);
	}
	return 1;
}

int wl_kin_backward(const wl_kin_cfg *cfg, size_t n, const double *t, wl_kin_step *st)
{
	return wl_kin_backward2(cfg, n, t, st, NULL);
}

int wl_kin_smooth(const wl_kin_cfg *cfg, size_t n, const double *t, const double *z, wl_kin_step *st,
                  double *loglik)
{
	double ll = 0, z0 = 0;
	size_t i;
	if (n == 0)
		return 1;
	for (i = 0; i < n; i++)
		if (isfinite(z[i])) {
			z0 = z[i];
			break;
		}
	for (i = 0; i < n; i++) {
		double nu, S;
		if (i == 0)
			wl_kin_start(cfg, z0, &st[0]);
		else
			wl_kin_predict(cfg, &st[i - 1], t[i] - t[i - 1], &st[i]);
		if (!isfinite(z[i]))
			continue;
		wl_kin_innov(cfg, &st[i], z[i], &nu, &S);
		if (!(S > 0))
			return 0;
		ll += -0.5 * (log(2 * WL_PI * S) + nu * nu / S);
		wl_kin_update(cfg, &st[i], nu, S);
	}
	if (loglik)
		*loglik = ll;
	return wl_kin_backward(cfg, n, t, st);
}
