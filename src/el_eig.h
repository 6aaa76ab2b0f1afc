/* el_eig: eigenvalues (no vectors) of small dense real matrices, without
 * allocation or library calls, for hot loops such as the bootstrap. */
#ifndef EL_EIG_H
#define EL_EIG_H

#include <stddef.h>

/* Doubles of workspace el_eig_values needs for an n x n matrix:
 * n * n + n (the working copy of the matrix and one column of scratch);
 * 0 for n == 0. The caller keeps n small enough for that many doubles to
 * be addressable (n is a few dozen in practice). Can't fail. */
size_t el_eig_work_doubles(size_t n);

/* Eigenvalues of the real n x n matrix a (column-major, leading dimension
 * lda >= n; read only, the rows past n in each column are never touched).
 * Method: the matrix is copied into work and scaled as a whole by a
 * power of two when its largest entry lies outside [2^-300, 2^300]; for
 * n <= 2 the eigenvalues then follow from a closed formula; otherwise the
 * copy is balanced by a diagonal similarity of powers of two (Parlett &
 * Reinsch, Numer. Math. 13, 1969; no permutation step), reduced to upper
 * Hessenberg form by Householder reflections and brought to
 * quasi-triangular form by Francis implicit double-shift QR iteration.
 * The scalings are exact and the rest is backward stable, so each
 * eigenvalue carries an error of order n eps ||A_balanced|| divided by
 * its reciprocal condition number (defective eigenvalues of a Jordan
 * block of size k: of order (n eps ||A||)^(1/k)).
 * Outputs: wr and wi (n each, caller-owned) receive the real and imaginary
 * parts in the order the eigenvalues appear on the diagonal of the final
 * quasi-triangular matrix (not sorted; the same convention as LAPACK
 * dhseqr). A complex conjugate pair takes two consecutive entries, the one
 * with positive imaginary part first, with exactly equal real parts and
 * imaginary parts of exactly opposite sign, so callers may group pairs by
 * exact equality; a real eigenvalue has wi == 0.0 exactly. work:
 * el_eig_work_doubles(n) doubles, caller-owned, contents on return
 * unspecified; it must not overlap a, wr or wi. Nothing is allocated and no
 * state is kept, so threads may call this at once with their own work, wr
 * and wi. Returns 0 on success; 1 when a has a NaN or infinite entry, when
 * the QR iteration does not converge within 30 * n sweeps in total, or when
 * a result is not finite (the caller then falls back to LAPACK dgeev; wr
 * and wi are then unspecified). n == 0 returns 0 and touches nothing (the
 * pointers may then be NULL). */
int el_eig_values(size_t n, const double *a, size_t lda, double *wr, double *wi,
                  double *work);

#endif
