/* el_boot_match: matching bootstrap replicate eigenvalues to the point
 * estimate's modes. */
#ifndef EL_BOOT_MATCH_H
#define EL_BOOT_MATCH_H

#include <stddef.h>

#include "el_error.h"
#include "el_modes.h"

/* Matching replicate eigenvalues to the point estimate's modes. */
typedef struct el_boot_matcher el_boot_matcher;

/* Plans a matcher for the point estimate (its lambdas and which modes are
 * pairs). Each mode stands for one eigenvalue slot, a pair for two; a
 * replicate's eigenvalues are folded to Im >= 0 (a conjugate pair gives two
 * equal slots) and assigned to the slots by the Hungarian algorithm on the
 * distance in the lambda plane, so a pair that splits into two real
 * eigenvalues (or two reals that merge into a pair) is still matched. The
 * matcher holds scratch space: one per thread. Errors: EL_ERR_INTERNAL
 * for an empty point estimate; EL_ERR_NOMEM. */
el_status el_boot_matcher_create(const el_modes *point,
                                 el_boot_matcher **matcher, el_error *err);

/* Frees the matcher. NULL is a no-op. */
void el_boot_matcher_destroy(el_boot_matcher *matcher);

/* Matches the n_eig eigenvalues lambda_re/im (both members of each pair,
 * in any order; finite) to the point modes. mode_re/mode_im (n_modes)
 * receive, for each point mode, the mean of the folded replicate
 * eigenvalues assigned to its slots (Im >= 0). *ambiguous is set to 1 when
 * the second-best assignment (best among those that take away one of the
 * best assignment's mode-to-mode links) costs at most 10% more than the
 * best (C2 <= 1.1 C1): the replicate could as well be read with two modes
 * swapped. Above 12 eigenvalues C2 is bounded by the best exchange of two
 * links (O(n^2) instead of n extra Hungarian runs). Returns 0, or -1 when
 * n_eig differs from the point estimate's number of eigenvalues. */
int el_boot_match(el_boot_matcher *matcher, const double *lambda_re,
                  const double *lambda_im, size_t n_eig, double *mode_re,
                  double *mode_im, int *ambiguous);

/* The point mode that the last el_boot_match gave the replicate
 * eigenvalue (column) j; 0 when none. */
size_t el_boot_matched_mode(const el_boot_matcher *matcher, size_t j);

/* The discriminant (z_1 - z_2)^2 of the two replicate eigenvalues that the
 * last el_boot_match gave each point pair's two slots, from their folded
 * values (Re z_1 - Re z_2)^2 - (Im z_1 + Im z_2)^2: (r_1 - r_2)^2 >= 0 when
 * the pair split into two reals r_1, r_2, -4 b^2 when it stayed one pair
 * a +- i b (whose conjugates fold onto the same slot value). With the
 * slots' mean (el_boot_match's mode_re) it gives a replicate's two roots;
 * unlike the roots, both are smooth functions of the model matrix at a
 * double root (docs/uncertainty.md, "Bounds at a Jordan block"). disc
 * (n_modes) gets NaN for a real mode (one slot). Cannot fail. */
void el_boot_match_discriminants(const el_boot_matcher *matcher, double *disc);

#endif
