/* Tests of el_sort: the radix sort of finite doubles gives the stable
 * ascending order to the last bit. */
#include "el_test.h"

#include <stdlib.h>
#include <string.h>

#include "el_rng.h"
#include "el_sort.h"

typedef struct {
    double value;
    size_t index;
} ref_item;

/* The reference: a stable sort written out (ties by the original index),
 * the order glibc's merge-sort qsort gives with a three-way comparator. */
static int ref_cmp(const void *a, const void *b)
{
    const ref_item *x = a, *y = b;
    if (x->value < y->value)
        return -1;
    if (x->value > y->value)
        return 1;
    return (x->index > y->index) - (x->index < y->index);
}

/* Sizes around the insertion-sort limit and a bootstrap's thousand
 * replicates; values with many ties, both zeros (equal, so they keep
 * their order: memcmp tells -0.0 from +0.0), negatives, subnormals and
 * the extremes of the finite doubles. */
static void test_matches_stable_order(void **state)
{
    (void)state;
    const size_t sizes[] = { 0, 1, 2, 23, 24, 25, 100, 1000, 5003 };
    el_rng rng;
    el_rng_seed(&rng, 2026, 0);
    for (size_t q = 0; q < sizeof sizes / sizeof sizes[0]; q++) {
        size_t n = sizes[q];
        double *v = malloc((n + 1) * sizeof(double));
        ref_item *ref = malloc((n + 1) * sizeof(ref_item));
        assert_non_null(v);
        assert_non_null(ref);
        for (size_t i = 0; i < n; i++) {
            double u = el_rng_normal(&rng);
            switch (i % 9) {
            case 0: v[i] = 0.0; break;
            case 1: v[i] = -0.0; break;
            case 2: v[i] = (double)(long)(3.0 * u); break; /* ties */
            case 3: v[i] = u * 1e-310; break;              /* subnormal */
            case 4: v[i] = u > 0.0 ? 1.7976931348623157e308 : -1.7976931348623157e308; break;
            default: v[i] = u; break;
            }
            ref[i].value = v[i];
            ref[i].index = i;
        }
        qsort(ref, n, sizeof *ref, ref_cmp);
        el_sort_finite(v, n);
        for (size_t i = 0; i < n; i++)
            assert_memory_equal(&v[i], &ref[i].value, sizeof(double));
        free(v);
        free(ref);
    }
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_matches_stable_order),
    };
    return cmocka_run_group_tests_name("sort", tests, NULL, NULL);
}
