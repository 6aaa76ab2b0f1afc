/* el_plane: regions of the trace-determinant plane of a 2x2 continuous-time
 * matrix (the fixed point's type for two states), shared by the verdict
 * and the bootstrap's region probabilities. */
#include "el_plane.h"

#include <math.h>
#include <stddef.h>

const char *el_region_name(el_region region)
{
    switch (region) {
    case EL_REGION_SADDLE: return "saddle";
    case EL_REGION_SINK: return "sink";
    case EL_REGION_SPIRAL_SINK: return "spiral sink";
    case EL_REGION_CENTER: return "center";
    case EL_REGION_SPIRAL_SOURCE: return "spiral source";
    case EL_REGION_SOURCE: return "source";
    case EL_REGION_DEGENERATE_NODE: return "degenerate node";
    case EL_REGION_NON_ISOLATED: return "non-isolated";
    case EL_REGION_COUNT: break;
    }
    return "none";
}

el_region el_verdict_plane_region_tols(double trace, double det, double tol_trace,
                                       double tol_quad)
{
    double disc = trace * trace - 4.0 * det;
    if (det < -tol_quad)
        return EL_REGION_SADDLE;
    if (fabs(det) <= tol_quad)
        return EL_REGION_NON_ISOLATED;
    if (fabs(disc) <= tol_quad)
        return fabs(trace) <= tol_trace ? EL_REGION_NON_ISOLATED
                                        : EL_REGION_DEGENERATE_NODE;
    if (disc < 0.0) {
        if (fabs(trace) <= tol_trace)
            return EL_REGION_CENTER;
        return trace < 0.0 ? EL_REGION_SPIRAL_SINK : EL_REGION_SPIRAL_SOURCE;
    }
    return trace < 0.0 ? EL_REGION_SINK : EL_REGION_SOURCE;
}

el_region el_verdict_plane_region(double trace, double det, double tol)
{
    return el_verdict_plane_region_tols(trace, det, tol, tol);
}

void el_verdict_plane_tolerances(double delta, double lambda_scale,
                                 double *tol_trace, double *tol_quad)
{
    double l = fabs(lambda_scale);
    if (tol_trace != NULL)
        *tol_trace = 2.0 * delta;
    if (tol_quad != NULL)
        *tol_quad = 8.0 * l * delta + 4.0 * delta * delta;
}
