/* el_linalg: small dense helpers on column-major matrices (matrix
 * exponential, products, exact discretisation) in plain C with a fixed
 * order of operations, so their results are the same doubles on every
 * x86-64 CPU whatever BLAS kernel the machine would pick: the demo logs
 * are built on them and must be the same bytes everywhere. For small
 * matrices only (no blocking; cost n^3). */
#ifndef EL_LINALG_H
#define EL_LINALG_H

#include <stddef.h>

#include "el_error.h"

/* C = A * B with A m x k, B k x n, C m x n (column-major, leading
 * dimensions m, k, m; C must not alias A or B). Each entry is the sum over
 * l = 0 .. k-1 in that order. Sizes of 0 are allowed (C is then zeroed, or
 * left alone when it is empty). Can't fail. */
void el_matmul(size_t m, size_t k, size_t n, const double *a, const double *b,
               double *c);

/* Matrix exponential E = exp(A) of an n x n matrix (column-major) by
 * scaling and squaring with diagonal Pade approximants (Higham 2005, SIAM
 * J. Matrix Anal. Appl. 26(4), Algorithm 2.3): degree 3, 5, 7 or 9 when
 * the 1-norm of A is small enough for it, otherwise [13/13] on A / 2^s.
 * Inputs: n >= 1, a (n*n, not modified). Outputs: e (n*n, must not alias
 * a). The Pade denominator is solved by LU with partial pivoting in plain
 * C. Workspace: work holds 6*n*n doubles, ipiv n ints (caller-owned, no
 * allocation here). Errors: EL_ERR_NUMERIC when A has a non-finite entry,
 * the Pade denominator is singular (cannot happen for finite A in exact
 * arithmetic) or the result overflows; EL_ERR_INTERNAL for n == 0 or a NULL
 * pointer. */
el_status el_expm(size_t n, const double *a, double *e, double *work, int *ipiv,
                  el_error *err);

/* Doubles of workspace el_discretise needs for n states: 32*n*n + 2*n. */
size_t el_discretise_work_size(size_t n);

/* Exact zero-order discretisation of dx/dt = A x + w(t), w white noise of
 * intensity Q (E[w(t) w(s)'] = Q delta(t - s)), over a step dt_s:
 *   Ad = exp(A dt),  Qd = integral_0^dt exp(A s) Q exp(A' s) ds,
 * both from one exponential of the 2n x 2n matrix [[-A, Q], [0, A']] dt
 * (Van Loan 1978, IEEE Trans. Automatic Control 23(3), "Computing
 * integrals involving the matrix exponential"): its top-right block is
 * Ad^-1 Qd and its bottom-right block Ad'. Qd is returned exactly
 * symmetric. Inputs: n >= 1, a and q (n*n column-major; q symmetric
 * positive semi-definite), dt_s > 0 finite. Outputs: ad, qd (n*n), and
 * qd_factor (n*n, may be NULL): the lower triangular G with G G' = Qd from
 * an unpivoted Cholesky factorisation (no pivot order that could depend on
 * ties); for a semi-definite Qd a column whose remaining pivot is at
 * rounding level (at most 4 n eps max_i Qd_ii) is set to zero, so G G'
 * equals Qd up to about sqrt(4 n eps) max_i Qd_ii per entry there.
 * x[k+1] = Ad x[k] + G z[k] with z[k] ~ N(0, I) then simulates the system
 * exactly at the sample times.
 * Workspace: work holds el_discretise_work_size(n) doubles, iwork 2*n ints.
 * Errors: EL_ERR_INTERNAL for a NULL pointer, n == 0, dt_s not positive and
 * finite, or q not symmetric; EL_ERR_NUMERIC when the exponential fails
 * (non-finite entries, overflow) or Qd is clearly not positive
 * semi-definite (a pivot below -4 n eps max_i Qd_ii: q was not). */
el_status el_discretise(size_t n, const double *a, const double *q, double dt_s,
                        double *ad, double *qd, double *qd_factor,
                        double *work, int *iwork, el_error *err);

#endif
