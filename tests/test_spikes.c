/* test_spikes: isolated one-sample spikes (el_spikes.h) are found where
 * they were put and nowhere else: not in Gaussian noise, not in the ringing
 * after an impact (a real response whose samples go on moving), not in a
 * quantised channel with no scale. Spike sizes are far beyond the 20-sd
 * threshold (1e3 sd) or far below it (noise: the chance of a Gaussian step
 * beyond 20 sd is the standard normal tail 2 Q(20) = 5.5e-89, computed
 * as 2 * scipy.stats.norm.sf(20) with Debian's python3-scipy), so the
 * counts are exact, not statistical. */
#include "el_test.h"

#include <math.h>
#include <stdlib.h>

#include "el_rng.h"
#include "el_spikes.h"

#define N 20000

static double *ar1_series(uint64_t seed)
{
    double *x = malloc(N * sizeof *x);
    assert_non_null(x);
    el_rng rng;
    el_rng_seed(&rng, seed, 0);
    double v = 0.0;
    for (size_t k = 0; k < N; k++) {
        v = 0.9 * v + el_rng_normal(&rng);
        x[k] = 3.0 + v;
    }
    return x;
}

static void test_spikes_found(void **state)
{
    (void)state;
    double *x = ar1_series(4);
    el_spikes none = el_spikes_find(x, N);
    assert_int_equal(none.count, 0);
    x[5000] += 1000.0;
    x[12000] -= 800.0;
    x[17000] += 2000.0;
    el_spikes sp = el_spikes_find(x, N);
    assert_int_equal(sp.count, 3);
    assert_int_equal(sp.first, 5000);
    /* The steps' robust sd is about 1 (unit innovations): the largest
     * spike's smaller step is 2000 +- a few sd. */
    assert_true(sp.largest_sd > 1500.0 && sp.largest_sd < 2500.0);
    free(x);
}

/* A two-sample glitch is no one-sample spike; an impact that sets off a
 * damped ringing (20 samples a period) is a real response. */
static void test_not_spikes(void **state)
{
    (void)state;
    double *x = ar1_series(5);
    x[3000] += 1000.0;
    x[3001] += 1000.0;
    for (size_t k = 8000; k < N; k++) {
        double t = (double)(k - 8000);
        x[k] += 500.0 * exp(-0.01 * t) * cos(2.0 * M_PI * t / 20.0);
    }
    el_spikes sp = el_spikes_find(x, N);
    assert_int_equal(sp.count, 0);
    free(x);
}

/* Mostly flat with rare steps: the median step is 0, there is no scale,
 * and no spike is claimed. */
static void test_quantised_no_scale(void **state)
{
    (void)state;
    double *x = calloc(N, sizeof *x);
    assert_non_null(x);
    x[100] = 1.0;
    x[9000] = 5.0;
    el_spikes sp = el_spikes_find(x, N);
    assert_int_equal(sp.count, 0);
    free(x);
}

/* Not isolated, so not reported: a burst of chatter at the Nyquist rate
 * (every sample a step of 1000 sd from both neighbours, 60 samples long),
 * and an oscillation growing out of the noise (10 samples a period, to
 * 200 times the noise by the end) whose peaks stand above both
 * neighbours by more than the threshold: in both the samples beside the
 * "spike" move as much as it does, which a glitch's neighbours do not. */
static void test_not_isolated(void **state)
{
    (void)state;
    double *x = ar1_series(6);
    for (size_t k = 4000; k < 4060; k++)
        x[k] += k % 2 ? 500.0 : -500.0;
    el_spikes burst = el_spikes_find(x, N);
    assert_int_equal(burst.count, 0);
    free(x);
    x = ar1_series(7);
    for (size_t k = 15000; k < N; k++) {
        double t = (double)(k - 15000);
        x[k] += 0.5 * exp(0.0012 * t) * cos(2.0 * M_PI * t / 10.0);
    }
    el_spikes grow = el_spikes_find(x, N);
    assert_int_equal(grow.count, 0);
    free(x);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_spikes_found),
        cmocka_unit_test(test_not_spikes),
        cmocka_unit_test(test_quantised_no_scale),
        cmocka_unit_test(test_not_isolated),
    };
    return cmocka_run_group_tests_name("spikes", tests, NULL, NULL);
}
