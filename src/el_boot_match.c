/* el_boot_match: assigns a replicate's eigenvalues to the point
 * estimate's modes (Hungarian algorithm on the distance in the lambda
 * plane) and flags replicates that could as well be read with two modes
 * swapped. */
#include "el_boot_match.h"

#include <float.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#define BOOT_MATCH_FORBIDDEN 1e30
#define BOOT_AMBIGUITY_RATIO 1.10
/* Above this many eigenvalues the second-best assignment is bounded by the
 * best exchange of two links instead of n extra Hungarian runs. */
#define BOOT_MURTY_MAX_SLOTS 12

/* ------------------------------------------------------------------ */
/* Matching by the Hungarian algorithm. */

struct el_boot_matcher {
    size_t n_modes, n;            /* point modes, eigenvalue slots */
    size_t *slot_mode;            /* n: point mode of each row slot */
    double *pre, *pim;            /* n: folded point lambda per slot */
    double *fre, *fim;            /* n: folded replicate lambda per column */
    size_t *group;                /* n: replicate mode (conjugate group) of each column */
    double *cost, *cwork;         /* n * n, [row + col * n] */
    double *rows;                 /* n * n: the cost a run reads, row by row [row * n + col] */
    double *u, *v, *minv;         /* n + 1 */
    size_t *p, *way;              /* n + 1 */
    size_t *open, *reached;       /* n + 1: a search's columns not reached, reached */
    double *ur, *vr;              /* n + 1: potentials of the reached rows and columns */
    size_t *assign, *best;        /* n: column of each row */
    double *lower;                /* n: lower bound on the cost without row i's link */
};

void el_boot_matcher_destroy(el_boot_matcher *m)
{
    if (m == NULL)
        return;
    free(m->slot_mode);
    free(m->pre);
    free(m->pim);
    free(m->fre);
    free(m->fim);
    free(m->group);
    free(m->cost);
    free(m->cwork);
    free(m->rows);
    free(m->u);
    free(m->v);
    free(m->minv);
    free(m->p);
    free(m->way);
    free(m->open);
    free(m->ur);
    free(m->vr);
    free(m->reached);
    free(m->assign);
    free(m->best);
    free(m->lower);
    free(m);
}

el_status el_boot_matcher_create(const el_modes *point, el_boot_matcher **matcher,
                                 el_error *err)
{
    *matcher = NULL;
    if (point == NULL || point->n_modes == 0 || point->modes == NULL)
        return el_error_set(err, EL_ERR_INTERNAL, "el_boot_matcher_create: no point modes");
    size_t n = 0;
    for (size_t i = 0; i < point->n_modes; i++)
        n += point->modes[i].pair ? 2 : 1;
    el_boot_matcher *m = calloc(1, sizeof *m);
    if (m == NULL)
        return el_error_set(err, EL_ERR_NOMEM, "out of memory (matcher)");
    m->n_modes = point->n_modes;
    m->n = n;
    m->slot_mode = malloc(n * sizeof(size_t));
    m->pre = malloc(n * sizeof(double));
    m->pim = malloc(n * sizeof(double));
    m->fre = malloc(n * sizeof(double));
    m->fim = malloc(n * sizeof(double));
    m->group = malloc(n * sizeof(size_t));
    m->cost = malloc(n * n * sizeof(double));
    m->cwork = malloc(n * n * sizeof(double));
    m->rows = malloc(n * n * sizeof(double));
    m->u = malloc((n + 1) * sizeof(double));
    m->v = malloc((n + 1) * sizeof(double));
    m->minv = malloc((n + 1) * sizeof(double));
    m->p = malloc((n + 1) * sizeof(size_t));
    m->way = malloc((n + 1) * sizeof(size_t));
    m->open = malloc((n + 1) * sizeof(size_t));
    m->ur = malloc((n + 1) * sizeof(double));
    m->vr = malloc((n + 1) * sizeof(double));
    m->reached = malloc((n + 1) * sizeof(size_t));
    m->assign = malloc(n * sizeof(size_t));
    m->best = malloc(n * sizeof(size_t));
    m->lower = malloc(n * sizeof(double));
    if (!m->slot_mode || !m->pre || !m->pim || !m->fre || !m->fim || !m->group
        || !m->cost || !m->cwork || !m->rows || !m->u || !m->v || !m->minv || !m->p || !m->way || !m->open || !m->reached || !m->ur || !m->vr
        || !m->assign || !m->best || !m->lower) {
        el_boot_matcher_destroy(m);
        return el_error_set(err, EL_ERR_NOMEM, "out of memory (matcher)");
    }
    size_t s = 0;
    for (size_t i = 0; i < point->n_modes; i++) {
        const el_mode *md = &point->modes[i];
        /* An instantaneous mode (mu = 0) has Re = -inf; a floor keeps the
         * costs finite and it still attracts the most negative replicate. */
        double re = isfinite(md->lambda_re) ? md->lambda_re : -DBL_MAX / 4;
        for (int k = 0; k < (md->pair ? 2 : 1); k++) {
            m->slot_mode[s] = i;
            m->pre[s] = re;
            m->pim[s] = fabs(md->lambda_im);
            s++;
        }
    }
    *matcher = m;
    return EL_OK;
}

/* One row of the Hungarian algorithm (potentials form): the shortest
 * augmenting path from row i over the reduced costs of the row-major cost
 * rows, then the augmentation and the potentials' update (the rows
 * matched so far and i keep u_r + v_c <= cost, with equality on the
 * matched links). The textbook loop visits every column twice per step
 * of the search; at 200 eigenvalues a row takes some 60 steps, most of a
 * wide log's matching. Here the search keeps the columns it has not
 * reached in a list (in column order, so ties go to the same column),
 * updates the reached ones from a second list, and takes the last
 * step's decrease of minv in the next step's pass: every number is the
 * textbook loop's, in the same order, for about a third of the passes. */
static void augment_row(el_boot_matcher *m, const double *rows, size_t i)
{
    size_t n = m->n;
    double *u = m->u, *v = m->v, *minv = m->minv;
    size_t *p = m->p, *way = m->way, *open = m->open, *reached = m->reached;
    size_t n_open = n, n_reached = 0;
    for (size_t t = 0; t < n; t++) {
        open[t] = t + 1;
        minv[t + 1] = HUGE_VAL;
    }
    double *ur = m->ur, *vr = m->vr;
    p[0] = i;
    ur[0] = u[i];
    vr[0] = v[0];
    reached[n_reached++] = 0;
    size_t j0 = 0;
    double last = 0.0; /* the previous step's delta, not yet taken from minv */
    do {
        size_t i0 = p[j0];
        const double *row = rows + (i0 - 1) * n - 1; /* row[j], j = 1..n */
        double ui = ur[n_reached - 1]; /* u[i0]: j0 was reached last */
        /* The smallest minv and its first position, as two interleaved
         * running minima (even and odd positions) joined at the end:
         * the same value and position as one scan in order, without
         * its chain of dependent comparisons. */
        double b0 = HUGE_VAL, b1 = HUGE_VAL;
        size_t p0 = n, p1 = n, t = 0;
        for (; t + 2 <= n_open; t += 2) {
            size_t ja = open[t], jb = open[t + 1];
            double ma = minv[ja] - last, mb = minv[jb] - last;
            double ca = row[ja] - ui - v[ja], cb = row[jb] - ui - v[jb];
            way[ja] = ca < ma ? j0 : way[ja];
            way[jb] = cb < mb ? j0 : way[jb];
            ma = ca < ma ? ca : ma;
            mb = cb < mb ? cb : mb;
            minv[ja] = ma;
            minv[jb] = mb;
            p0 = ma < b0 ? t : p0;
            b0 = ma < b0 ? ma : b0;
            p1 = mb < b1 ? t + 1 : p1;
            b1 = mb < b1 ? mb : b1;
        }
        if (t < n_open) {
            size_t ja = open[t];
            double ma = minv[ja] - last, ca = row[ja] - ui - v[ja];
            way[ja] = ca < ma ? j0 : way[ja];
            ma = ca < ma ? ca : ma;
            minv[ja] = ma;
            p0 = ma < b0 ? t : p0;
            b0 = ma < b0 ? ma : b0;
        }
        double best[2] = { b0, b1 };
        size_t pos[2] = { p0, p1 };
        size_t at = best[1] < best[0] || (best[1] == best[0] && pos[1] < pos[0]) ? pos[1]
                                                                                 : pos[0];
        double delta = at == pos[0] ? best[0] : best[1];
        size_t j1 = open[at];
        for (size_t q = 0; q < n_reached; q++) {
            ur[q] += delta;
            vr[q] -= delta;
        }
        last = delta;
        memmove(open + at, open + at + 1, (n_open - at - 1) * sizeof(size_t));
        n_open--;
        ur[n_reached] = p[j1] != 0 ? u[p[j1]] : 0.0;
        vr[n_reached] = v[j1];
        reached[n_reached++] = j1;
        j0 = j1;
    } while (p[j0] != 0);
    /* The reached columns' potentials back in place (the last column
     * reached is free: the loop above never updated it). */
    for (size_t q = 0; q + 1 < n_reached; q++) {
        u[p[reached[q]]] = ur[q];
        v[reached[q]] = vr[q];
    }
    do {
        size_t j1 = way[j0];
        p[j0] = p[j1];
        j0 = j1;
    } while (j0 != 0);
}

/* The run's assignment (assign[row] = column) from p, and its cost. */
static double take_assignment(const el_boot_matcher *m, const double *cost, size_t *assign)
{
    size_t n = m->n;
    double total = 0.0;
    for (size_t j = 1; j <= n; j++) {
        assign[m->p[j] - 1] = j - 1;
        total += cost[(m->p[j] - 1) + (j - 1) * n];
    }
    return total;
}

/* The search scans one row of the cost at a time: a row-major copy makes
 * that scan contiguous (at 200 eigenvalues the column-major stride missed
 * the cache on every entry). */
static const double *row_major(el_boot_matcher *m, const double *cost)
{
    size_t n = m->n;
    double *rows = m->rows;
    for (size_t j = 0; j < n; j++)
        for (size_t i = 0; i < n; i++)
            rows[i * n + j] = cost[i + j * n];
    return rows;
}

/* Minimum-cost perfect assignment of rows to columns of the n x n cost
 * (potentials form of the Hungarian algorithm, O(n^3)), rows added one at
 * a time from zero potentials. assign[row] = column. Returns the total
 * cost. */
static double hungarian(el_boot_matcher *m, const double *cost, size_t *assign)
{
    size_t n = m->n;
    const double *rows = row_major(m, cost);
    for (size_t j = 0; j <= n; j++) {
        m->u[j] = 0.0;
        m->v[j] = 0.0;
        m->p[j] = 0;
        m->way[j] = 0;
    }
    for (size_t i = 1; i <= n; i++)
        augment_row(m, rows, i);
    return take_assignment(m, cost, assign);
}

/* Groups the replicate columns into modes: the two members of a conjugate
 * pair fold onto the same point and form one mode. */
static void group_columns(el_boot_matcher *m, const double *im)
{
    size_t n = m->n;
    for (size_t j = 0; j < n; j++) {
        m->group[j] = j;
        if (im[j] == 0.0)
            continue;
        for (size_t k = 0; k < j; k++) {
            if (m->group[k] == k && m->fre[k] == m->fre[j] && m->fim[k] == m->fim[j]
                && im[k] == -im[j]) {
                int taken = 0;
                for (size_t q = k + 1; q < j; q++)
                    if (m->group[q] == k)
                        taken = 1;
                if (!taken) {
                    m->group[j] = k;
                    break;
                }
            }
        }
    }
}

/* Distance in the lambda plane: hypot's overflow care only where it is
 * needed (an instantaneous mode sits at -DBL_MAX / 4), a plain root
 * elsewhere, several times cheaper. */
static double plane_distance(double dx, double dy)
{
    if (fabs(dx) < 1e150 && fabs(dy) < 1e150)
        return sqrt(dx * dx + dy * dy);
    return hypot(dx, dy);
}

/* A lower bound on cost_without_link for the link of row (slot) i in the
 * best assignment, from that run's potentials u, v (u_r + v_c <= cost,
 * equality on the assignment, so any assignment costs sum u + sum v plus
 * its reduced costs, all >= 0). An assignment without the link must give
 * each slot of i's point mode a column outside i's replicate group, and
 * the column the best run gave i some row outside that mode: two distinct
 * entries, each at least the smallest reduced cost available to it. With
 * well separated modes this bound alone shows that no swap comes within
 * BOOT_AMBIGUITY_RATIO, and the n extra Hungarian runs are skipped; the
 * margin absorbs rounding in the potentials. */
static double link_lower_bound(const el_boot_matcher *m, size_t i)
{
    size_t n = m->n, pm = m->slot_mode[i], j = m->best[i], g = m->group[j];
    const double *u = m->u, *v = m->v;
    double base = 0.0, scale = 0.0;
    for (size_t k = 1; k <= n; k++) {
        base += u[k] + v[k];
        scale += fabs(u[k]) + fabs(v[k]);
    }
    double row_min = HUGE_VAL, col_min = HUGE_VAL;
    for (size_t c = 0; c < n; c++)
        if (m->group[c] != g) {
            double rc = m->cost[i + c * n] - u[i + 1] - v[c + 1];
            row_min = rc < row_min ? rc : row_min;
        }
    for (size_t r = 0; r < n; r++)
        if (m->slot_mode[r] != pm) {
            double rc = m->cost[r + j * n] - u[r + 1] - v[j + 1];
            col_min = rc < col_min ? rc : col_min;
        }
    if (!isfinite(row_min) || !isfinite(col_min))
        return HUGE_VAL; /* no alternative exists: the exact run says so too */
    return base + fmax(0.0, row_min) + fmax(0.0, col_min) - 1e-9 * (scale + 1.0);
}

/* Cost of the best assignment that never links point mode pm to the
 * replicate mode (group) g. */
static double cost_without_link(el_boot_matcher *m, size_t pm, size_t g)
{
    size_t n = m->n;
    memcpy(m->cwork, m->cost, n * n * sizeof(double));
    for (size_t i = 0; i < n; i++) {
        if (m->slot_mode[i] != pm)
            continue;
        for (size_t j = 0; j < n; j++)
            if (m->group[j] == g)
                m->cwork[i + j * n] = BOOT_MATCH_FORBIDDEN;
    }
    double c = hungarian(m, m->cwork, m->assign);
    return c >= BOOT_MATCH_FORBIDDEN / 2 ? HUGE_VAL : c;
}

int el_boot_match(el_boot_matcher *m, const double *lambda_re,
                  const double *lambda_im, size_t n_eig, double *mode_re,
                  double *mode_im, int *ambiguous)
{
    size_t n = m->n;
    if (n_eig != n)
        return -1;
    for (size_t j = 0; j < n; j++) {
        m->fre[j] = lambda_re[j];
        m->fim[j] = fabs(lambda_im[j]);
    }
    group_columns(m, lambda_im);
    for (size_t j = 0; j < n; j++)
        for (size_t i = 0; i < n; i++)
            m->cost[i + j * n] = plane_distance(m->pre[i] - m->fre[j], m->pim[i] - m->fim[j]);
    double c1 = hungarian(m, m->cost, m->best);
    for (size_t q = 0; q < m->n_modes; q++) {
        mode_re[q] = 0.0;
        mode_im[q] = 0.0;
    }
    for (size_t i = 0; i < n; i++) {
        size_t q = m->slot_mode[i], j = m->best[i];
        double w = (i + 1 < n && m->slot_mode[i + 1] == q)
                           || (i > 0 && m->slot_mode[i - 1] == q)
                       ? 0.5
                       : 1.0;
        mode_re[q] += w * m->fre[j];
        mode_im[q] += w * m->fim[j];
    }
    /* Second best: take away one mode-to-mode link of the best assignment
     * at a time (a Murty-style partition restricted to the links that
     * matter; swapping the two equal slots of a pair is no alternative). */
    double c2 = HUGE_VAL;
    if (n > BOOT_MURTY_MAX_SLOTS) {
        /* Many modes: n Hungarian runs per replicate would cost O(n^4);
         * the best single exchange of two links is the usual cheap bound
         * on the second-best cost (exact when the alternative is a swap of
         * two modes, the case that matters). */
        for (size_t i = 0; i < n; i++)
            for (size_t k = i + 1; k < n; k++) {
                size_t ji = m->best[i], jk = m->best[k];
                if (m->slot_mode[i] == m->slot_mode[k] || m->group[ji] == m->group[jk])
                    continue;
                double c = c1 - m->cost[i + ji * n] - m->cost[k + jk * n]
                           + m->cost[i + jk * n] + m->cost[k + ji * n];
                if (c < c2)
                    c2 = c;
            }
        *ambiguous = isfinite(c2) && c2 <= BOOT_AMBIGUITY_RATIO * c1;
        return 0;
    }
    /* Bounds first (they read the potentials of the best run, which the
     * exact runs overwrite); an exact run only for a link whose bound does
     * not already rule it out. */
    double limit = BOOT_AMBIGUITY_RATIO * c1;
    for (size_t i = 0; i < n; i++)
        m->lower[i] = link_lower_bound(m, i);
    for (size_t i = 0; i < n; i++) {
        size_t pm = m->slot_mode[i], g = m->group[m->best[i]];
        int seen = 0;
        for (size_t k = 0; k < i; k++)
            if (m->slot_mode[k] == pm && m->group[m->best[k]] == g)
                seen = 1;
        if (seen || m->lower[i] > limit)
            continue;
        double c = cost_without_link(m, pm, g);
        if (c < c2)
            c2 = c;
    }
    *ambiguous = isfinite(c2) && c2 <= BOOT_AMBIGUITY_RATIO * c1;
    return 0;
}

/* Point mode that the last match gave eigenvalue (column) j. */
size_t el_boot_matched_mode(const el_boot_matcher *m, size_t j)
{
    for (size_t i = 0; i < m->n; i++)
        if (m->best[i] == j)
            return m->slot_mode[i];
    return 0;
}

void el_boot_match_discriminants(const el_boot_matcher *m, double *disc)
{
    for (size_t q = 0; q < m->n_modes; q++)
        disc[q] = NAN;
    /* A pair's two slots are consecutive rows (el_boot_matcher_create). */
    for (size_t i = 0; i + 1 < m->n; i++) {
        if (m->slot_mode[i] != m->slot_mode[i + 1])
            continue;
        size_t j1 = m->best[i], j2 = m->best[i + 1];
        double dre = m->fre[j1] - m->fre[j2], sim = m->fim[j1] + m->fim[j2];
        disc[m->slot_mode[i]] = dre * dre - sim * sim;
        i++;
    }
}
