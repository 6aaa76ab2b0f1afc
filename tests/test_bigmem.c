/* Tests of el_bigmem: large working buffers (2 MiB aligned, marked for
 * transparent huge pages) behave as malloc's, small ones are malloc's. */
#include "el_test.h"

#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include "el_bigmem.h"

/* A buffer of EL_BIGMEM_MIN_BYTES or more starts on a 2 MiB boundary (the
 * condition for the kernel to back it with 2 MiB pages), every byte of it
 * can be written and read back, and free() takes it; 0 bytes give NULL. */
static void test_large_aligned_and_usable(void **state)
{
    (void)state;
    size_t sizes[] = { EL_BIGMEM_MIN_BYTES, EL_BIGMEM_MIN_BYTES + 8, (size_t)6400008 };
    for (size_t q = 0; q < sizeof sizes / sizeof sizes[0]; q++) {
        unsigned char *p = el_bigmem_alloc(sizes[q]);
        assert_non_null(p);
        assert_int_equal((uintptr_t)p % ((uintptr_t)2 << 20), 0);
        memset(p, 0xA5, sizes[q]);
        assert_int_equal(p[0], 0xA5);
        assert_int_equal(p[sizes[q] - 1], 0xA5);
        free(p);
    }
    assert_null(el_bigmem_alloc(0));
}

/* Below EL_BIGMEM_MIN_BYTES the buffer is plain malloc's: usable and
 * freed by free() (ASan checks the pairing in make check-san). */
static void test_small_is_plain(void **state)
{
    (void)state;
    double *p = el_bigmem_alloc(1000 * sizeof(double));
    assert_non_null(p);
    for (size_t i = 0; i < 1000; i++)
        p[i] = (double)i;
    assert_true(p[999] == 999.0);
    free(p);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_large_aligned_and_usable),
        cmocka_unit_test(test_small_is_plain),
    };
    return cmocka_run_group_tests_name("bigmem", tests, NULL, NULL);
}
