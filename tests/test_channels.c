/* test_channels: the state channels of a log (el_channels.h): a default
 * channel that does not move (a stuck sensor) is left out with a warning
 * when another moves; all constant, nothing changes (the fit says why);
 * and end to end, the default assessment of a log with a stuck channel
 * fits the others while a --channels list that names it is refused.
 * "Constant" is el_stats_spread's test (spread below 1e-12 of the mean):
 * the moving channels below change by whole units, far above it. */
#include "el_test.h"

#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "el_assess.h"
#include "el_channels.h"
#include "el_ingest.h"

static void read_series(const char *text, el_table *t, el_series *s)
{
    FILE *fp = tmpfile();
    assert_non_null(fp);
    assert_int_equal(fwrite(text, 1, strlen(text), fp), strlen(text));
    rewind(fp);
    el_error e;
    assert_int_equal(el_table_read_stream(fp, "stuck.csv", NULL, t, &e), EL_OK);
    fclose(fp);
    size_t cols[8], n = 0;
    assert_int_equal(el_channels_select(t, NULL, "--channels", NULL, 0, cols, &n, &e), EL_OK);
    el_timebase_options tb;
    el_timebase_defaults(&tb);
    assert_int_equal(el_series_build(t, cols, n, &tb, s, NULL, &e), EL_OK);
}

static void test_constant_channel_left_out(void **state)
{
    (void)state;
    el_table t = {0};
    el_series s;
    read_series("t,a,stuck,b\n0,1,4.5,3\n1,2,4.5,1\n2,0,4.5,2\n3,5,4.5,7\n", &t, &s);
    size_t cols[3] = {1, 2, 3}, kept = 3;
    el_warnings w = {0};
    el_error e;
    assert_int_equal(el_channels_drop_constant(&s, cols, &kept, &w, &e), EL_OK);
    assert_int_equal(kept, 2);
    assert_int_equal(cols[0], 1);
    assert_int_equal(cols[1], 3);
    assert_int_equal(w.count, 1);
    assert_non_null(strstr(w.items[0], "'stuck'"));
    assert_non_null(strstr(w.items[0], "4.5"));
    el_warnings_free(&w);
    el_series_free(&s);
    el_table_free(&t);
}

static void test_all_constant_unchanged(void **state)
{
    (void)state;
    el_table t = {0};
    el_series s;
    read_series("t,a,b\n0,1,2\n1,1,2\n2,1,2\n", &t, &s);
    size_t cols[2] = {1, 2}, kept = 2;
    el_warnings w = {0};
    el_error e;
    assert_int_equal(el_channels_drop_constant(&s, cols, &kept, &w, &e), EL_OK);
    assert_int_equal(kept, 2);
    assert_int_equal(w.count, 0);
    el_series_free(&s);
    el_table_free(&t);
}

/* End to end on a damped oscillation in x and v (a written-out recursion
 * of a stable two-state system) beside a stuck channel. */
static void test_assess_skips_stuck_channel(void **state)
{
    (void)state;
    char path[] = "/tmp/el_stuck_XXXXXX";
    int fd = mkstemp(path);
    assert_true(fd >= 0);
    FILE *fp = fdopen(fd, "w");
    assert_non_null(fp);
    fprintf(fp, "t,x,stuck,v\n");
    double x = 1.0, v = 0.0;
    unsigned seed = 12345u;
    for (int k = 0; k < 600; k++) {
        /* One missing cell of the stuck channel: the first build fills it,
         * the build without the channel has nothing to fill. */
        fprintf(fp, k == 300 ? "%d,%.9f,,%.9f\n" : "%d,%.9f,7,%.9f\n", k, x, v);
        seed = seed * 1103515245u + 12345u;
        double kick = ((double)(seed >> 16 & 0x7fff) / 32768.0 - 0.5) * 0.2;
        double xn = 0.95 * x + 0.2 * v, vn = -0.2 * x + 0.95 * v + kick;
        x = xn;
        v = vn;
    }
    fclose(fp);
    el_assess_options opt;
    el_assess_defaults(&opt);
    opt.path = path;
    opt.boot.replicates = 0;
    el_assessment r = {0};
    el_error e;
    assert_int_equal(el_assess_run(&opt, &r, &e), EL_OK);
    assert_int_equal(r.series.n_channels, 2);
    int warned = 0;
    for (size_t i = 0; i < r.input_warnings.count; i++) {
        warned |= strstr(r.input_warnings.items[i], "'stuck'") != NULL;
        assert_null(strstr(r.input_warnings.items[i], "filled"));
    }
    assert_true(warned);
    el_assessment_free(&r);
    memset(&r, 0, sizeof r);
    opt.channels = "x,stuck,v";
    assert_int_equal(el_assess_run(&opt, &r, &e), EL_ERR_DATA);
    assert_non_null(strstr(e.message, "constant"));
    el_assessment_free(&r);
    /* A constant measured input stops the run too; the hint names the
     * option it was given with (--input), not --channels. */
    memset(&r, 0, sizeof r);
    opt.channels = NULL;
    opt.inputs = "stuck";
    assert_int_equal(el_assess_run(&opt, &r, &e), EL_ERR_DATA);
    assert_non_null(strstr(e.message, "input 'stuck' is constant"));
    assert_non_null(strstr(e.hint, "--input"));
    el_assessment_free(&r);
    remove(path);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_constant_channel_left_out),
        cmocka_unit_test(test_all_constant_unchanged),
        cmocka_unit_test(test_assess_skips_stuck_channel),
    };
    return cmocka_run_group_tests_name("channels", tests, NULL, NULL);
}
