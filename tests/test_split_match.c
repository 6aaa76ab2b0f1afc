/* test_split_match: the split-half drift check compares like with like
 * (el_split_decide's shape match). The halves' modes are those the
 * halves' hankel models gave for fresh log s010 at 20 dB
 * (bench/fresh_family.py, seed 5120512): a stationary simulated system
 * of 8 sensors with modes at 9.85, 21.7 and 35.0 Hz, so its truth has no
 * drift. The first half's model held three modes (least damped 21.3 Hz),
 * the second half's one (9.40 Hz): comparing the first half's least
 * damped mode with the second half's mode nearest it compared two
 * different modes and called "drift" (z = -26 on the frequency). Shapes
 * are the scaled shapes (magnitude at phase in degrees, per channel) of
 * those models; each mode's replicates are drawn normal about it with the
 * spreads those halves' bootstraps gave. */
#include "el_test.h"

#include <string.h>

#include "el_rng.h"
#include "el_split.h"

#define NC 8
#define REPS 200

typedef struct {
    double f_hz, re, f_sd, re_sd;
    double mag[NC], ph[NC];
} mode_spec;

/* s010 at 20 dB, first half: 21.28, 9.232 and 35.15 Hz. */
static const mode_spec M21 = {21.28, -13.26, 0.295, 1.72,
                              {0.81, 0.43, 0.28, 0.26, 0.31, 0.29, 0.64, 1.00},
                              {-12, -97, 171, -14, -174, -174, 179, 0}};
static const mode_spec M9A = {9.232, -16.94, 0.30, 2.0,
                              {0.45, 0.41, 1.00, 0.99, 0.14, 0.13, 0.17, 0.19},
                              {174, -71, 0, 2, -133, -133, -128, -171}};
static const mode_spec M35 = {35.15, -23.02, 0.30, 2.0,
                              {0.52, 0.89, 0.01, 0.18, 0.99, 1.00, 0.81, 0.11},
                              {-15, -98, -15, -18, 0, 0, 179, -14}};
/* Second half: 9.396 Hz. */
static const mode_spec M9B = {9.396, -17.71, 0.346, 2.53,
                              {0.45, 0.46, 0.99, 1.00, 0.18, 0.16, 0.19, 0.17},
                              {179, -74, -1, 0, -140, -140, -151, -155}};

typedef struct {
    el_mode mode[3];
    double mag[3][NC], ph[3][NC];
    el_modes modes;
    el_boot_result boot;
    double re[REPS * 3], im[REPS * 3];
} half_fixture;

static void half_make(half_fixture *h, const mode_spec *const *spec, size_t n,
                      uint64_t seed)
{
    memset(h, 0, sizeof *h);
    el_rng rng;
    el_rng_seed(&rng, seed, 0);
    for (size_t j = 0; j < n; j++) {
        el_mode *m = &h->mode[j];
        m->lambda_re = spec[j]->re;
        m->lambda_im = 2 * M_PI * spec[j]->f_hz;
        m->frequency_hz = spec[j]->f_hz;
        m->decay_rate = -spec[j]->re;
        m->pair = 1;
        memcpy(h->mag[j], spec[j]->mag, sizeof h->mag[j]);
        memcpy(h->ph[j], spec[j]->ph, sizeof h->ph[j]);
        m->shape_scaled_magnitude = h->mag[j];
        m->shape_scaled_phase_deg = h->ph[j];
        for (size_t k = 0; k < REPS; k++) {
            h->re[k * n + j] = spec[j]->re + spec[j]->re_sd * el_rng_normal(&rng);
            h->im[k * n + j] = 2 * M_PI * (spec[j]->f_hz + spec[j]->f_sd * el_rng_normal(&rng));
        }
    }
    h->modes.n_modes = n;
    h->modes.n_channels = NC;
    h->modes.modes = h->mode;
    h->boot.replicates = REPS;
    h->boot.n_modes = n;
    h->boot.lambda_re = h->re;
    h->boot.lambda_im = h->im;
}

/* Both halves recorded as el_assess does before the window is fitted
 * (hankel): the first half's least damped mode, and the second half's
 * mode nearest it. */
static void take_both(el_split_check *sc, half_fixture *a, half_fixture *b)
{
    memset(sc, 0, sizeof *sc);
    el_split_take_mode(sc, 0, &a->modes, 0, &a->boot);
    double ref[2] = {sc->lambda_half[0][0], fabs(sc->lambda_half[0][1])};
    el_split_take_mode(sc, 1, &b->modes, el_split_mode(&b->modes, ref), &b->boot);
    el_split_decide(sc);
}

/* s010: the halves' nearest modes have different shapes (MAC near 0);
 * the second half's 9.40 Hz mode is the first half's 9.23 Hz mode
 * (MAC 0.99), and compared with it the halves agree: no drift. */
static void test_missed_mode_is_no_drift(void **state)
{
    (void)state;
    static half_fixture a, b;
    const mode_spec *first[] = {&M21, &M9A, &M35}, *second[] = {&M9B};
    half_make(&a, first, 3, 1);
    half_make(&b, second, 1, 2);
    static el_split_check sc;
    take_both(&sc, &a, &b);
    assert_true(sc.tested);
    assert_true(sc.rematched);
    assert_true(sc.mac >= EL_SPLIT_MAC_SAME);
    assert_close(sc.frequency_hz[0], 9.232, 0.0, 1e-9);
    assert_close(sc.frequency_hz[1], 9.396, 0.0, 1e-9);
    assert_true(fabs(sc.z_frequency) < EL_ASSESS_SPLIT_Z);
    assert_false(sc.drift);
}

/* One mode of one shape whose frequency moves from 9.23 to 11.0 Hz
 * between the halves (19 %, 4.2 times the halves' combined spread of
 * 0.42 Hz): a drift, called. */
static void test_same_shape_drift_is_called(void **state)
{
    (void)state;
    static half_fixture a, b;
    mode_spec moved = M9A;
    moved.f_hz = 11.0;
    const mode_spec *first[] = {&M9A}, *second[] = {&moved};
    half_make(&a, first, 1, 3);
    half_make(&b, second, 1, 4);
    static el_split_check sc;
    take_both(&sc, &a, &b);
    assert_true(sc.tested);
    assert_false(sc.rematched);
    assert_true(sc.drift);
}

/* Halves that share no mode of one shape: not compared, and no drift. */
static void test_no_shared_shape_is_not_tested(void **state)
{
    (void)state;
    static half_fixture a, b;
    const mode_spec *first[] = {&M21}, *second[] = {&M9B};
    half_make(&a, first, 1, 5);
    half_make(&b, second, 1, 6);
    static el_split_check sc;
    take_both(&sc, &a, &b);
    assert_false(sc.tested);
    assert_false(sc.drift);
    assert_non_null(strstr(sc.not_tested, "no mode of one shape"));
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_missed_mode_is_no_drift),
        cmocka_unit_test(test_same_shape_drift_is_called),
        cmocka_unit_test(test_no_shared_shape_is_not_tested),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
