/* el_hankel_keep: which physical poles of the subspace stage the
 * automatic hankel model keeps (el_hankel_keep.h). Moved out of
 * el_est_hankel.c on 2026-12-05 so that the rules can be tested on a
 * stabilisation diagram made by hand. */
#include "el_hankel_keep.h"

#include <math.h>
#include <stdint.h>

/* A physical pole is kept only when its share of the modal contributions
 * is at least this fraction of the strongest physical pole's (a floor
 * against poles the stage labels physical at a share of a few 1e-3). The
 * strongest is taken among the poles that do not grow when the order has
 * one (chains_of_order): a growing mode's part of the block Hankel rises
 * with the square of its growth over the log, not with how well the other
 * modes are seen (measured: on the fresh family's short growing logs the
 * growing mode held 0.96-0.99 of the contributions and decaying modes of
 * damping ratio 0.1-0.28 that persisted over 20+ orders held 0.4-1 % of
 * it, and were left out; tests/test_hankel_growing.c). */
#define HK_MIN_SHARE_RATIO 0.01

/* A physical chain that first appears at an order above this factor times
 * the eigenvalues kept so far (its own included) plus 2 is left out: real
 * modes enter the stabilisation early (at about their eigenvalue count),
 * while at the high orders the automatic order can reach on short
 * two-sensor logs a noise pole can persist over the five orders the stage
 * asks for, beside a real mode (measured: a 100-s window of a slowly
 * drifting oscillator, e2e_track.sh, had a chain starting at order 17 with
 * 8 % of the contributions and negative damping; datasets/rig_test.csv's
 * real 2.4 Hz mode has the same share but starts at order 4). */
#define HK_LATE_FACTOR 2

/* A physical pole that would grow by more than this many e-foldings over
 * the log (Re lambda times the log's duration) and is not the strongest
 * pole of its order is left out of the automatic model. A mode that grows
 * by g e-foldings and is excited at all ends the log e^g times larger
 * than it began, so it carries most of the block Hankel; one that carries
 * less than the strongest pole was excited at under e^-g of it (at ten,
 * 87 dB down, far below the sensor noise of any log the tool reads), so
 * the data cannot hold it: a noise direction of the order. Measured on
 * issue 10's fresh family (docs/uncertainty.md, "Unexcited growing
 * poles"): three stationary logs kept such a pole (21, 267 and 507
 * e-foldings, 1-6 % of the strongest pole's share) beside every true
 * mode and were undecided at P(stable) 0.66-0.85; the true growing modes
 * of the family's growing logs grow by 1.1-2.6 e-foldings and are the
 * strongest pole of their order. Ten is twice under the smallest spurious
 * growth measured and far above real growth a log records before a trip
 * or a limit. */
#define HK_UNEXCITED_EFOLDS 10.0

/* Whether pole z (order n - 1) continues pole y (order n) in frequency
 * and damping, by the stabilisation rule's tolerances (el_subspace.c:
 * max(stab_freq_rel, a tenth of the half-power band 2 zeta) in natural
 * frequency) without its shape test, and twice its relative tolerance in
 * damping ratio (10 %; its absolute floor of 0.005 unchanged, so nothing
 * moves for damping ratios below 0.05). The stabilisation's 5 % is
 * narrower than an order-to-order move of a heavily damped mode
 * (measured: the 0.384 Hz, zeta 0.252 mode of issue 10's 6-sensor system,
 * 20,000 samples, damping 0.238 -> 0.225 between orders 19 and 20; dated
 * from order 20, the late-chain rule dropped it in 3 of 16 logs,
 * tests/test_subspace.c). Not wider for light damping: an absolute
 * tolerance of a tenth of the frequency band's (0.01 at zeta 0.03) also
 * dated a growing pole of the fan warm-up demo's drift from early orders
 * and gave that log a hankel model (tests/e2e_assess.sh). And without its
 * test of kind: a real pole that an order estimates as a pair of damping
 * ratio within the damping tolerance of 1 is the same mode (near a
 * repeated or critically damped eigenvalue the estimate moves across the
 * split by its noise; measured: the slow pole of an overdamped node became
 * a pair of damping 0.999 at one order of 30). */
static int continues(const el_subspace_options *o, const el_subspace_pole *z,
                     const el_subspace_pole *y)
{
    if (!isfinite(z->natural_hz)
        || !isfinite(y->natural_hz) || !isfinite(z->damping_ratio)
        || !isfinite(y->damping_ratio))
        return 0;
    double tol = fmax(o->stab_freq_rel, 0.2 * fmin(fabs(y->damping_ratio), 1.0));
    return fabs(z->natural_hz - y->natural_hz) <= tol * y->natural_hz
           && fabs(z->damping_ratio - y->damping_ratio)
                  <= fmax(2.0 * o->stab_damp_rel * fabs(y->damping_ratio), o->stab_damp_abs);
}

/* The order at which a chain's mode first appears: the chain's lowest
 * order, walked down while the order below has a pole that continues it
 * in frequency and damping. A chain can break where its shape test fails
 * once, when a noise pole of the same frequency enters at a high order
 * and shares its shape (measured: the slow real pole of an overdamped
 * node, 20,000 samples, chain broken at order 8 of 30 beside a noise pair
 * at 0.1 Hz); the mode itself was there from order 1, and the late-chain
 * rule (HK_LATE_FACTOR) should not count it as a newcomer. */
static size_t chain_start(const el_subspace_result *res, size_t chain)
{
    el_subspace_options o;
    el_subspace_defaults(&o);
    const el_subspace_pole *y = NULL;
    for (size_t j = 0; j < res->n_poles; j++)
        if (res->poles[j].chain == chain && (y == NULL || res->poles[j].order < y->order))
            y = &res->poles[j];
    if (y == NULL)
        return SIZE_MAX;
    for (size_t n = y->order; n > 1;) {
        const el_subspace_pole *z = NULL;
        double best = INFINITY;
        for (size_t j = 0; j < res->n_poles; j++) {
            const el_subspace_pole *c = &res->poles[j];
            double d = fabs(c->natural_hz - y->natural_hz);
            if (c->order == n - 1 && continues(&o, c, y) && d < best) {
                best = d;
                z = c;
            }
        }
        if (z == NULL)
            break;
        y = z;
        n--;
    }
    return y->order;
}

/* The chains the automatic model takes from the physical poles of order
 * n: those whose share of the modal contributions is at least
 * HK_MIN_SHARE_RATIO of the strongest physical pole's of that order (the
 * strongest decaying one, when there is one), by
 * the order their chain starts at, earliest first; a chain that starts
 * later than HK_LATE_FACTOR times the eigenvalues kept with it (plus 2) is
 * left out, and all after it; so is a pole growing by more than
 * HK_UNEXCITED_EFOLDS over the log that is not the strongest of its
 * order. Writes the chains to chains and returns their count; *n_eig
 * receives their eigenvalue count. */
static size_t chains_of_order(const el_subspace_result *res, size_t n, size_t *chains,
                              size_t *n_eig)
{
    /* The log's samples: n_windows = samples - 2 horizon + 1. */
    double duration_s = (double)(res->n_windows + 2 * res->horizon - 1) * res->dt;
    double top = 0.0, top_decaying = 0.0;
    for (size_t k = 0; k < res->n_poles; k++) {
        const el_subspace_pole *q = &res->poles[k];
        if (q->order != n || !q->physical)
            continue;
        top = fmax(top, q->contribution);
        if (!(q->lambda_re > 0.0))
            top_decaying = fmax(top_decaying, q->contribution);
    }
    double strongest = top;
    if (top_decaying > 0.0)
        top = top_decaying;   /* HK_MIN_SHARE_RATIO: not against a growing mode */
    size_t cand[2 * EL_SUBSPACE_MAX_ORDER + 2], start[2 * EL_SUBSPACE_MAX_ORDER + 2];
    size_t n_cand = 0;
    for (size_t k = 0; k < res->n_poles; k++) {
        const el_subspace_pole *q = &res->poles[k];
        if (q->order != n || !q->physical || q->contribution < HK_MIN_SHARE_RATIO * top ||
            n_cand >= 2 * EL_SUBSPACE_MAX_ORDER + 2)
            continue;
        if (q->lambda_re * duration_s > HK_UNEXCITED_EFOLDS && q->contribution < strongest)
            continue;
        size_t st = chain_start(res, q->chain);
        size_t i = n_cand++;
        for (; i > 0 && start[i - 1] > st; i--) {
            cand[i] = cand[i - 1];
            start[i] = start[i - 1];
        }
        cand[i] = k;
        start[i] = st;
    }
    size_t eig = 0, n_chains = 0;
    for (size_t i = 0; i < n_cand; i++) {
        const el_subspace_pole *q = &res->poles[cand[i]];
        size_t e = eig + (q->mu_im > 0.0 ? 2 : 1);
        if (start[i] > HK_LATE_FACTOR * e + 2)
            break;
        eig = e;
        chains[n_chains++] = q->chain;
    }
    *n_eig = eig;
    return n_chains;
}


/* The stage's order's set counts as missing a strong mode when its poles
 * carry less than this share of that order's modal contributions: then
 * the orders below are read for a set of as many eigenvalues too (the
 * lowest such order). The measured case: the slow pole of an overdamped
 * node, 0.6-0.9 of the contributions, dropped with its chain broken,
 * leaving a model of the fast pole with 0.06-0.14. A half: a model that
 * leaves out most of what its order explains has lost a strong mode (our
 * rule). Otherwise only a set of more eigenvalues replaces the stage's:
 * reading the orders below for as many moved family M's system 41 at
 * 20 dB (2 sensors, 2 modes) to a lower order, one of whose modes was then
 * 5.0 % off in frequency (2.1 % at the stage's order). */
#define HK_LOW_KEPT_SHARE 0.5

/* The share of order n's modal contributions that the poles of the given
 * chains carry. */
static double kept_share(const el_subspace_result *res, size_t n, const size_t *chains,
                         size_t n_chains)
{
    double share = 0.0;
    for (size_t k = 0; k < res->n_poles; k++) {
        const el_subspace_pole *q = &res->poles[k];
        if (q->order != n)
            continue;
        for (size_t c = 0; c < n_chains; c++)
            if (q->chain == chains[c]) {
                share += q->contribution;
                break;
            }
    }
    return share;
}

/* The chains kept (el_hankel_keep.h): when the stage's automatic order
 * keeps some chain by chains_of_order, the lowest order up to the stage's
 * whose physical poles give more eigenvalues by chains_of_order than the
 * stage's order does (the most of them; as many also count when the
 * stage's set carries less than HK_LOW_KEPT_SHARE), and its chains; else
 * the stage's order's. The model then takes the lowest order at which
 * every one of those chains has a pole (el_subspace_set_order, by the
 * caller): fewer noise poles in the model and in the bootstrap's
 * replicates, whose eigenvalues are matched to the kept ones. Why the
 * orders below: the stage's order is the smallest with the most physical
 * poles at once, and noise chains and late splits count there too. On
 * overdamped nodes a noise pole entering at order 8-14 broke the slow
 * pole's chain, both were dated late and the model kept only the fast
 * pole, while the orders below held both (calibrate --misses: 4 of 54
 * sink logs at 5,000 samples, 6 of 57 at 20,000). Until 2026-12-05 the
 * orders below were read only when the stage's set carried less than
 * HK_LOW_KEPT_SHARE; but a mode of 0.4 of the contributions can be lost
 * the same way: on the fresh family's s057 (3 sensors, 28,635 samples)
 * the 9.9 Hz mode, steady over orders 4-17, split into two poles at order
 * 22, a third physical chain made order 23 the stage's, and the split's
 * chains, dated late, were left out with the mode (tests/
 * test_hankel_keep.c). Only when the stage's order keeps some chain: the
 * lower orders repair a model, they never make one where the rules at
 * the stage's order found none (which logs hankel models decides --method
 * auto's choice; reading lower orders there gave the second half of the
 * fan warm-up demo log a model, and auto then took hankel for the whole
 * log, whose model holds a weak growing pole: P(stable) 1 -> 0.67). */
size_t el_hankel_keep_chains(const el_subspace_result *res, size_t *chains,
                             size_t *model_order, size_t *n_eig)
{
    if (res == NULL || chains == NULL || model_order == NULL || n_eig == NULL)
        return 0;
    *n_eig = 0;
    *model_order = 0;
    if (res->order == 0)
        return 0;
    size_t e = 0, n_chains = chains_of_order(res, res->order, chains, &e);
    if (n_chains == 0)
        return 0;
    /* A set as large as the stage's order keeps is read below only when
     * that set misses a strong mode (HK_LOW_KEPT_SHARE). */
    int ties = kept_share(res, res->order, chains, n_chains) < HK_LOW_KEPT_SHARE;
    size_t best = res->order, best_eig = e;
    for (size_t n = 1; n < res->order; n++) {
        e = 0;
        chains_of_order(res, n, chains, &e);
        if (e > best_eig || (ties && e == best_eig && n < best)) {
            best_eig = e;
            best = n;
        }
    }
    n_chains = chains_of_order(res, best, chains, &e);
    if (n_chains == 0)
        return 0;
    size_t lowest = best;
    for (size_t n = 1; n < best; n++) {
        size_t found = 0;
        for (size_t c = 0; c < n_chains; c++)
            for (size_t k = 0; k < res->n_poles; k++)
                if (res->poles[k].order == n && res->poles[k].chain == chains[c]) {
                    found++;
                    break;
                }
        if (found == n_chains) {
            lowest = n;
            break;
        }
    }
    *model_order = lowest;
    *n_eig = e;
    return n_chains;
}
