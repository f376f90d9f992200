/*
 * camfit.c: the camera fit used by every calibration route (calib.h,
 * wl_camfit): Levenberg-Marquardt on the reprojection error over a chosen
 * subset of the camera's parameters (pose, focal length, principal point,
 * distortion terms, water depth), with an optional prior on the camera
 * height (a tape-measured lens height, or one measured from the robots'
 * tags), and the covariance of the result.
 *
 * Covariance: with the residuals weighted (pixels by the fit's own residual
 * standard deviation, the height prior by its tolerance), the parameters'
 * covariance is (JᵀJ)⁻¹ (Gauss-Newton at the solution; Hartley & Zisserman
 * 2004, §5.2.3 and A6.4).  Parameters that are held fixed at an assumed
 * value with a stated uncertainty (the principal point of a near-nadir
 * view, an assumed focal length) enter as inputs: the fitted parameters
 * follow them through S = -(JᵀJ)⁻¹ Jᵀ ∂r/∂φ, and the joint covariance of
 * (fitted, assumed) is [[C + S Σ Sᵀ, S Σ], [Σ Sᵀ, Σ]], so that a first-order
 * propagation through partial derivatives sees that the pose absorbs most
 * of a principal-point error.
 */
#include "calib/calib.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "core/linalg.h"

static const char *const param_names[WL_CP_N] = {
        "rvec_x_rad", "rvec_y_rad", "rvec_z_rad", "t_x_m", "t_y_m", "t_z_m", "f_px",          "cx_px",
        "cy_px",      "k1",         "k2",         "p1",    "p2",    "k3",    "water_depth_m",
};

const char *wl_camparam_name(int k)
{
	return k >= 0 && k < WL_CP_N ? param_names[k] : "";
}

int wl_camparam_index(const char *name)
{
	for (int k = 0; k < WL_CP_N; k++)
		if (strcmp(name, param_names[k]) == 0)
			return k;
	return -1;
}

void wl_camparam_get(const wl_camera *cam, double p[WL_CP_N])
{
	wl_rodrigues_inv(cam->R, p);
	p[WL_CP_TX] = cam->t[0];
	p[WL_CP_TY] = cam->t[1];
	p[WL_CP_TZ] = cam->t[2];
	p[WL_CP_F] = cam->K[0];
	p[WL_CP_CX] = cam->K[2];
	p[WL_CP_CY] = cam->K[5];
	p[WL_CP_K1] = cam->dist[0];
	p[WL_CP_K2] = cam->dist[1];
	p[WL_CP_P1] = cam->dist[2];
	p[WL_CP_P2] = cam->dist[3];
	p[WL_CP_K3] = cam->dist[4];
	p[WL_CP_WATER] = cam->water_depth_m;
}

void wl_camparam_set(wl_camera *cam, const double p[WL_CP_N])
{
	double aspect = cam->K[0] > 0 ? cam->K[4] / cam->K[0] : 1;
	wl_rodrigues(p, cam->R);
	cam->t[0] = p[WL_CP_TX];
	cam->t[1] = p[WL_CP_TY];
	cam->t[2] = p[WL_CP_TZ];
	cam->K[0] = p[WL_CP_F];
	cam->K[4] = p[WL_CP_F] * aspect;
	cam->K[2] = p[WL_CP_CX];
	cam->K[5] = p[WL_CP_CY];
	cam->dist[0] = p[WL_CP_K1];
	cam->dist[1] = p[WL_CP_K2];
	cam->dist[2] = p[WL_CP_P1];
	cam->dist[3] = p[WL_CP_P2];
	cam->dist[4] = p[WL_CP_K3];
	cam->water_depth_m = p[WL_CP_WATER];
}

/* The fit's working state: the problem, the parameter map and scratch. */
typedef struct {
	wl_camera base;
	const double *xyz, *uv;
	const int *used;
	int n, m_px, m; /* points, pixel residuals, all residuals */
	const wl_camfit_opts *o;
	double w_px;                   /* weight of a pixel residual (1 / sigma_px) */
	double height_sd;              /* the prior's deviation in use */
	int np, idx[WL_CP_N];          /* fitted parameters */
	double full[WL_CP_N];          /* every parameter (fixed ones at their values) */
	double *r, *rp, *rm, *J, *JtJ; /* m; m; m; WL_CP_N x m; WL_CP_N^2 */
} fit;

static double step_of(int k, double v)
{
	if (k <= WL_CP_RZ)
		return 1e-6;
	if (k <= WL_CP_TZ)
		return 1e-6 * fmax(1, fabs(v));
	if (k == WL_CP_F)
		return 1e-6 * fmax(1, fabs(v));
	if (k == WL_CP_CX || k == WL_CP_CY)
		return 1e-3;
	if (k == WL_CP_WATER)
		return 1e-6;
	return 1e-6; /* distortion terms */
}

/* Residuals for the full parameter vector p; 0 when a point is behind the camera. */
static int residuals(const fit *F, const double *p, double *r)
{
	wl_camera cam = F->base;
	int k = 0;
	wl_camparam_set(&cam, p);
	for (int i = 0; i < F->n; i++) {
		double u, v;
		int ok;
		if (F->used && !F->used[i])
			continue;
		ok = cam.water_depth_m > 0 ? wl_camera_project_water(&cam, F->xyz + 3 * i, &u, &v)
		                           : wl_camera_project(&cam, F->xyz + 3 * i, &u, &v);
		if (!ok || !isfinite(u) || !isfinite(v))
			return 0;
		r[k++] = F->w_px * (u - F->uv[2 * i]);
		r[k++] = F->w_px * (v - F->uv[2 * i + 1]);
	}
	if (F->height_sd > 0) {
		double C[3];
		wl_camera_position(&cam, C);
		r[k++] = (C[2] - F->o->height_m) / F->height_sd;
	}
	return 1;
}

static double sumsq(const double *r, int m)
{
	double s = 0;
	for (int i = 0; i < m; i++)
		s += r[i] * r[i];
	return s;
}

/* J (rows: parameters listed in ids[0..np), columns: residuals) by
 * central differences at p. */
static int jacobian(const fit *F, const double *p, const int *ids, int np, double *J)
{
	for (int a = 0; a < np; a++) {
		double q[WL_CP_N], h;
		int k = ids[a];
		memcpy(q, p, sizeof q);
		h = step_of(k, p[k]);
		q[k] = p[k] + h;
		if (!residuals(F, q, F->rp))
			return 0;
		q[k] = p[k] - h;
		if (!residuals(F, q, F->rm))
			return 0;
		for (int i = 0; i < F->m; i++)
			J[(size_t)a * F->m + i] = (F->rp[i] - F->rm[i]) / (2 * h);
	}
	return 1;
}

static void normal_eq(const fit *F, const double *J, int np, double *JtJ, double *Jtr)
{
	for (int a = 0; a < np; a++) {
		if (Jtr) {
			double s = 0;
			for (int i = 0; i < F->m; i++)
				s -= J[(size_t)a * F->m + i] * F->r[i];
			Jtr[a] = s;
		}
		for (int b = 0; b <= a; b++) {
			double s = 0;
			for (int i = 0; i < F->m; i++)
				s += J[(size_t)a * F->m + i] * J[(size_t)b * F->m + i];
			JtJ[a * np + b] = JtJ[b * np + a] = s;
		}
	}
}

/* Levenberg-Marquardt (Marquardt 1963) from F->full; returns the final
 * sum of squares, or -1 when the start is infeasible. */
static double lm(fit *F)
{
	double lambda = 1e-3, c;
	int np = F->np;
	if (!residuals(F, F->full, F->r))
		return -1;
	c = sumsq(F->r, F->m);
	for (int it = 0; it < 200 && np > 0; it++) {
		double Jtr[WL_CP_N];
		int improved = 0;
		if (!jacobian(F, F->full, F->idx, np, F->J))
			return -1;
		normal_eq(F, F->J, np, F->JtJ, Jtr);
		for (int tries = 0; tries < 12 && !improved; tries++) {
			double A[WL_CP_N * WL_CP_N], step[WL_CP_N], q[WL_CP_N], cn;
			memcpy(A, F->JtJ, sizeof(double) * (size_t)(np * np));
			memcpy(step, Jtr, sizeof(double) * (size_t)np);
			for (int a = 0; a < np; a++)
				A[a * np + a] += lambda * (F->JtJ[a * np + a] + 1e-12);
			if (!wl_solve(A, step, np)) {
				lambda *= 10;
				continue;
			}
			memcpy(q, F->full, sizeof q);
			for (int a = 0; a < np; a++)
				q[F->idx[a]] += step[a];
			if (!residuals(F, q, F->rp)) {
				lambda *= 10;
				continue;
			}
			cn = sumsq(F->rp, F->m);
			if (cn < c) {
				double rel = (c - cn) / c;
				memcpy(F->full, q, sizeof q);
				memcpy(F->r, F->rp, sizeof(double) * (size_t)F->m);
				c = cn;
				lambda = fmax(lambda / 10, 1e-15);
				improved = 1;
				if (rel < 1e-14)
					it = 1000;
			} else {
				lambda *= 10;
			}
		}
		if (!improved || c < 1e-24)
			break;
	}
	return c;
}

/* The covariance of the fitted and assumed parameters at F->full. */
static void covariance(fit *F, wl_camfit_result *res)
{
	int np = F->np, na = 0, ida[WL_CP_N], ntot;
	double C[WL_CP_N * WL_CP_N], *Ja = NULL, S[WL_CP_N * WL_CP_N], tmp[WL_CP_N];
	res->n_params = 0;
	if (np == 0 || !jacobian(F, F->full, F->idx, np, F->J))
		return;
	normal_eq(F, F->J, np, F->JtJ, NULL);
	if (!wl_invert(F->JtJ, C, np))
		return;
	for (int k = 0; k < WL_CP_N; k++)
		if (!(F->o->free & (1u << k)) && F->o->assumed_sd[k] > 0)
			ida[na++] = k;
	ntot = np + na;
	for (int a = 0; a < np; a++)
		res->param[a] = F->idx[a];
	for (int b = 0; b < na; b++)
		res->param[np + b] = ida[b];
	memset(res->cov, 0, sizeof res->cov);
	for (int a = 0; a < np; a++)
		for (int b = 0; b < np; b++)
			res->cov[a * ntot + b] = C[a * np + b];
	if (na > 0 && (Ja = malloc(sizeof(double) * (size_t)na * (size_t)F->m)) &&
	    jacobian(F, F->full, ida, na, Ja)) {
		/* S (np x na) = -C Jᵀ Ja */
		for (int b = 0; b < na; b++) {
			for (int a = 0; a < np; a++) {
				double s = 0;
				for (int i = 0; i < F->m; i++)
					s += F->J[(size_t)a * F->m + i] * Ja[(size_t)b * F->m + i];
				tmp[a] = s;
			}
			for (int a = 0; a < np; a++) {
				double s = 0;
				for (int c = 0; c < np; c++)
					s += C[a * np + c] * tmp[c];
				S[a * na + b] = -s;
			}
		}
		for (int a = 0; a < np; a++)
			for (int b = 0; b < np; b++) {
				double s = 0;
				for (int c = 0; c < na; c++) {
					double var = F->o->assumed_sd[ida[c]] * F->o->assumed_sd[ida[c]];
					s += S[a * na + c] * var * S[b * na + c];
				}
				res->cov[a * ntot + b] += s;
			}
		for (int a = 0; a < np; a++)
			for (int b = 0; b < na; b++) {
				double v =
				        S[a * na + b] * F->o->assumed_sd[ida[b]] * F->o->assumed_sd[ida[b]];
				res->cov[a * ntot + np + b] = res->cov[(np + b) * ntot + a] = v;
			}
		for (int b = 0; b < na; b++)
			res->cov[(np + b) * ntot + np + b] =
			        F->o->assumed_sd[ida[b]] * F->o->assumed_sd[ida[b]];
	} else {
		ntot = np;
		for (int a = 0; a < np; a++)
			for (int b = 0; b < np; b++)
				res->cov[a * ntot + b] = C[a * np + b];
	}
	free(Ja);
	res->n_params = ntot;
}

double wl_camfit(wl_camera *cam, const double *xyz, const double *uv, const int *used, int n,
                 const wl_camfit_opts *o, wl_camfit_result *res)
{
	fit F;
	double c = -1, ssr_px = 0;
	int n_used = 0, prior = o->height_sd_m > 0;
	wl_camfit_result local;
	if (!res)
		res = &local;
	memset(res, 0, sizeof *res);
	res->rms_px = res->sigma_px = NAN;
	memset(&F, 0, sizeof F);
	for (int i = 0; i < n; i++)
		n_used += used ? used[i] != 0 : 1;
	F.base = *cam;
	F.xyz = xyz;
	F.uv = uv;
	F.used = used;
	F.n = n;
	F.o = o;
	F.m_px = 2 * n_used;
	F.m = F.m_px + prior;
	F.height_sd = o->height_sd_m;
	for (int k = 0; k < WL_CP_N; k++)
		if (o->free & (1u << k))
			F.idx[F.np++] = k;
	if (F.m < F.np || n_used < 3)
		return -1;
	wl_camparam_get(cam, F.full);
	F.r = malloc(sizeof(double) * (size_t)F.m * (3 + WL_CP_N));
	if (!F.r)
		return -1;
	F.rp = F.r + F.m;
	F.rm = F.rp + F.m;
	F.J = F.rm + F.m;
	F.JtJ = malloc(sizeof(double) * WL_CP_N * WL_CP_N);
	if (!F.JtJ)
		goto out;
	/* pass 1 weighs pixels as 0.5 px each (a typical detection error); pass
	 * 2 by the residual spread of pass 1, so that a height prior weighs
	 * against what the points actually say */
	F.w_px = 1 / 0.5;
	if ((c = lm(&F)) < 0)
		goto out;
	if (prior) {
		double s;
		ssr_px = sumsq(F.r, F.m_px) / (F.w_px * F.w_px);
		s = F.m_px > F.np ? sqrt(ssr_px / (F.m_px - F.np)) : 0.5;
		F.w_px = 1 / fmax(s, 0.02);
		if ((c = lm(&F)) < 0)
			goto out;
	}
	ssr_px = sumsq(F.r, F.m_px) / (F.w_px * F.w_px);
	res->rms_px = sqrt(ssr_px / n_used);
	res->sigma_px = F.m > F.np ? sqrt(ssr_px / fmax(1, F.m_px - F.np + prior)) : NAN;
	res->dof = F.m - F.np;
	/* the covariance with pixels weighed by the residual spread found */
	if (o->want_cov) {
		double s = isfinite(res->sigma_px) ? fmax(res->sigma_px, 0.02) : 0.5;
		F.w_px = 1 / s;
		if (prior && o->height_cov_sd_m > 0)
			F.height_sd = o->height_cov_sd_m;
		if (residuals(&F, F.full, F.r))
			covariance(&F, res);
	}
	wl_camparam_set(cam, F.full);
	res->ok = 1;
out:
	free(F.r);
	free(F.JtJ);
	return res->ok ? res->rms_px : -1;
}
