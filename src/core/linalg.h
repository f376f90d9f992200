/*
 * linalg.h: small dense linear algebra in double precision for the stages
 * (homography, circle fits, smoothers).  Matrices are row-major arrays the
 * caller owns; sizes are small (n <= WL_LA_MAX), so nothing allocates.
 */
#ifndef WL_LINALG_H
#define WL_LINALG_H

#define WL_LA_MAX 16

/* c (n×p) = a (n×m) · b (m×p).  c must not alias a or b. */
void wl_mat_mul(const double *a, const double *b, double *c, int n, int m, int p);
/* b (m×n) = aᵀ for a (n×m). */
void wl_mat_transpose(const double *a, double *b, int n, int m);

/* Solves a x = b (n×n, one right-hand side) by Gaussian elimination with
 * partial pivoting.  a and b are overwritten (x is returned in b).
 * Returns 0 when a is singular to working precision. */
int wl_solve(double *a, double *b, int n);

/* Inverts an n×n matrix into inv.  Returns 0 if singular. */
int wl_invert(const double *a, double *inv, int n);

/* Eigen-decomposition of a symmetric n×n matrix by cyclic Jacobi rotations
 * (Golub & Van Loan, Matrix Computations, §8.5).  a is destroyed.  On
 * return evals is in ascending order and column k of evecs (row-major n×n)
 * is the unit eigenvector of evals[k]. */
void wl_sym_eig(double *a, int n, double *evals, double *evecs);

/* 3×3 helpers. */
double wl_det3(const double m[9]);
int wl_inv3(const double m[9], double out[9]);
void wl_mul3(const double a[9], const double b[9], double out[9]);
void wl_mul3v(const double m[9], const double v[3], double out[3]);

#endif
