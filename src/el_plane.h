/* el_plane: the regions of the trace-determinant plane of a real 2x2
 * continuous-time matrix (saddle, sink, spiral sink, ...) and the
 * tolerances that make them agree with the eigenvalues' stability class.
 * Below both the verdict and the bootstrap: each reads it, neither reads
 * the other through it. */
#ifndef EL_PLANE_H
#define EL_PLANE_H

typedef enum {
    EL_REGION_SADDLE = 0,
    EL_REGION_SINK,
    EL_REGION_SPIRAL_SINK,
    EL_REGION_CENTER,
    EL_REGION_SPIRAL_SOURCE,
    EL_REGION_SOURCE,
    EL_REGION_DEGENERATE_NODE,
    EL_REGION_NON_ISOLATED,
    EL_REGION_COUNT,
    EL_REGION_NONE = EL_REGION_COUNT  /* not a 2-state model / not defined */
} el_region;

/* "saddle", "sink", "spiral sink", "center", "spiral source", "source",
 * "degenerate node", "non-isolated" (DESIGN.md spelling); "none" else. */
const char *el_region_name(el_region region);

/* Region of the trace-determinant plane of a real 2x2 continuous-time
 * matrix. tol is the absolute tolerance under which det, the discriminant
 * trace^2 - 4 det, and the trace count as zero (boundary cases); pass a
 * scale-aware value (see el_verdict_plane_tolerances).
 * det < -tol: saddle; |det| <= tol: non-isolated; |disc| <= tol:
 * degenerate node (a star or improper node; sign of trace says sink or
 * source, and |trace| <= tol as well means the zero matrix, non-isolated);
 * disc < 0: |trace| <= tol center, trace < 0 spiral sink, else spiral
 * source; disc > 0: trace < 0 sink, else source. Can't fail. */
el_region el_verdict_plane_region(double trace, double det, double tol);

/* The same with separate tolerances: tol_trace (1/time unit) for the
 * trace, tol_quad (1/time unit^2) for det and the discriminant. Use it
 * with el_verdict_plane_tolerances so that the region agrees with the
 * stability class of the same eigenvalues. Can't fail. */
el_region el_verdict_plane_region_tols(double trace, double det, double tol_trace,
                                       double tol_quad);

/* Tolerances for the plane that match a marginal tolerance delta on each
 * eigenvalue (el_verdict_compute: delta = 1e-9/dt) for eigenvalues of
 * modulus up to lambda_scale: perturbing lambda_1, lambda_2 by up to delta
 * moves the trace by 2 delta, det = lambda_1 lambda_2 by up to
 * 2 L delta + delta^2 and the discriminant (lambda_1 - lambda_2)^2 by up
 * to 8 L delta + 4 delta^2 (L = lambda_scale); *tol_trace = 2 delta,
 * *tol_quad = 8 L delta + 4 delta^2. Then a center is exactly a pair with
 * |Re lambda| <= delta. Can't fail. */
void el_verdict_plane_tolerances(double delta, double lambda_scale,
                                 double *tol_trace, double *tol_quad);

#endif
