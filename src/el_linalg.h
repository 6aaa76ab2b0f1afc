/* el_linalg: small dense helpers on column-major matrices shared by the
 * stages (matrix exponential, products), built on BLAS/LAPACK. */
#ifndef EL_LINALG_H
#define EL_LINALG_H

#include <stddef.h>

#include "el_error.h"

/* C = A * B with A m x k, B k x n, C m x n (column-major, C must not alias
 * A or B). Can't fail. */
void el_matmul(size_t m, size_t k, size_t n, const double *a, const double *b,
               double *c);

/* Matrix exponential E = exp(A) of an n x n matrix by scaling and squaring
 * with a [13/13] Pade approximant (Higham 2005). work must hold 6*n*n
 * doubles, ipiv n ints. EL_ERR_NUMERIC when the Pade denominator is
 * singular (cannot happen for finite A in exact arithmetic). */
el_status el_expm(size_t n, const double *a, double *e, double *work, int *ipiv,
                  el_error *err);

#endif
