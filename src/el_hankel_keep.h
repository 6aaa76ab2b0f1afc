/* el_hankel_keep: which physical poles of the subspace stage's
 * stabilisation (el_subspace.h) the automatic hankel model keeps, and at
 * which order: the estimator's rules on top of the stage's (a chain must
 * start early and carry a share of the strongest decaying pole's; the
 * orders up to the stage's are read for the set with the most
 * eigenvalues). Pure: reads an el_subspace_result, writes chain ids. */
#ifndef EL_HANKEL_KEEP_H
#define EL_HANKEL_KEEP_H

#include "el_subspace.h"

#include <stddef.h>

/* Most chains el_hankel_keep_chains writes (a chain holds at least one
 * eigenvalue of an order of at most 2 EL_SUBSPACE_MAX_ORDER). */
#define EL_HANKEL_KEEP_MAX (2 * EL_SUBSPACE_MAX_ORDER + 2)

/* The chains of res (an el_subspace_execute result with the automatic
 * order, res->order > 0) the automatic hankel model keeps. When the
 * stage's order res->order keeps some chain by the rules below, the
 * lowest order below it whose physical poles give more eigenvalues by the
 * same rules (the most; as many too when the stage's set carries less than
 * half of its order's modal contributions) supplies the chains, else
 * res->order itself. The rules, per order: the physical
 * poles of that order whose share of the modal contributions is at least
 * 1 % of the strongest physical decaying pole's of that order (of the
 * strongest pole's when none decays), by the order their chain starts at,
 * earliest first, stopping at the first chain that starts later than
 * 2 x (the eigenvalues kept with it) + 2. Writes at most
 * EL_HANKEL_KEEP_MAX chain ids to chains and returns their count (0:
 * none, when the stage's order keeps nothing); *model_order receives the
 * lowest order at which every kept chain has a pole, *n_eig their
 * eigenvalue count at the order that supplied them. No errors: a NULL
 * argument or res->order == 0 gives 0. */
size_t el_hankel_keep_chains(const el_subspace_result *res, size_t *chains,
                             size_t *model_order, size_t *n_eig);

#endif
