/* test_demo: the demo scenarios are reproducible byte for byte, match the
 * committed datasets, are well-formed, and carry the documented dynamics. */
#include "el_test.h"

#include <stdlib.h>
#include <string.h>

#include "el_demo.h"
#include "el_linalg.h"

static char *read_file(const char *path, size_t *length)
{
    FILE *f = fopen(path, "rb");
    if (f == NULL)
        return NULL;
    size_t cap = 1 << 16, len = 0;
    char *data = malloc(cap + 1);
    size_t got;
    while (data != NULL && (got = fread(data + len, 1, cap - len, f)) > 0) {
        len += got;
        if (len == cap) {
            char *bigger = realloc(data, 2 * cap + 1);
            if (bigger == NULL) {
                free(data);
                data = NULL;
                break;
            }
            data = bigger;
            cap *= 2;
        }
    }
    fclose(f);
    if (data != NULL)
        data[len] = '\0';
    *length = len;
    return data;
}

static void generate(const char *name, el_buf *csv)
{
    el_error err;
    el_error_clear(&err);
    el_status st = el_demo_generate(name, csv, &err);
    if (st != EL_OK)
        fail_msg("el_demo_generate(%s): %s", name, err.message);
}

static void test_list_and_find(void **state)
{
    (void)state;
    assert_int_equal(el_demo_count(), 3);
    assert_null(el_demo_get(el_demo_count()));
    for (size_t i = 0; i < el_demo_count(); i++) {
        const el_demo_info *d = el_demo_get(i);
        assert_non_null(d);
        assert_ptr_equal(el_demo_find(d->name), d);
        assert_true(strlen(d->summary) > 0 && strlen(d->truth) > 0);
        const el_demo_system *s = el_demo_system_find(d->name);
        assert_non_null(s);
        assert_true(s->n >= 1 && s->n <= 4);
    }
    assert_non_null(el_demo_find("booster-pump"));
    assert_non_null(el_demo_find("rig-test"));
    assert_non_null(el_demo_find("fan-warmup"));
    assert_null(el_demo_find("no-such-demo"));
    assert_null(el_demo_find(NULL));
    assert_null(el_demo_system_find("no-such-demo"));
}

static void test_unknown_name_is_usage_error_with_hint(void **state)
{
    (void)state;
    el_buf csv = {0};
    el_error err;
    el_error_clear(&err);
    assert_int_equal(el_demo_generate("pump", &csv, &err), EL_ERR_USAGE);
    assert_int_equal(csv.length, 0);
    assert_non_null(strstr(err.message, "pump"));
    assert_non_null(strstr(err.hint, "booster-pump"));
    assert_non_null(strstr(err.hint, "rig-test"));
    el_buf_free(&csv);
}

static void test_generate_twice_gives_identical_bytes(void **state)
{
    (void)state;
    for (size_t i = 0; i < el_demo_count(); i++) {
        el_buf a = {0}, b = {0};
        generate(el_demo_get(i)->name, &a);
        generate(el_demo_get(i)->name, &b);
        assert_int_equal(a.length, b.length);
        assert_memory_equal(a.data, b.data, a.length);
        /* Keep the committed files small enough for the repository. */
        assert_true(a.length < 2u * 1024 * 1024);
        el_buf_free(&a);
        el_buf_free(&b);
    }
}

static void test_committed_datasets_equal_generator(void **state)
{
    (void)state;
    for (size_t i = 0; i < el_demo_count(); i++) {
        const el_demo_info *d = el_demo_get(i);
        char path[256];
        snprintf(path, sizeof path, "datasets/%s", d->file_name);
        size_t len = 0;
        char *file = read_file(path, &len);
        if (file == NULL)
            fail_msg("cannot read %s (tests run from the repository root)", path);
        el_buf csv = {0};
        generate(d->name, &csv);
        size_t common = len < csv.length ? len : csv.length, at = 0;
        while (at < common && file[at] == csv.data[at])
            at++;
        if (at != common || len != csv.length) {
            long line = 1;
            for (size_t k = 0; k < at; k++)
                line += csv.data[k] == '\n';
            fail_msg("%s differs from `eigenlog demo %s` output at line %ld "
                     "(regenerate it and review the change)", path, d->name, line);
        }
        free(file);
        el_buf_free(&csv);
    }
}

/* Parses the generated CSV: checks the header, the field count and the
 * time column, and returns the data as rows x n (row-major), or fails. */
static double *parse_csv(const el_demo_system *s, const char *text, int iso_time)
{
    double *y = malloc(s->rows * s->n * sizeof *y);
    assert_non_null(y);
    char header[512];
    int used = snprintf(header, sizeof header, "%s", s->time_column);
    for (size_t i = 0; i < s->n; i++)
        used += snprintf(header + used, sizeof header - (size_t)used, ",%s",
                         s->channels[i]);
    const char *p = text;
    const char *eol = strchr(p, '\n');
    assert_non_null(eol);
    assert_int_equal((size_t)(eol - p), strlen(header));
    assert_memory_equal(p, header, strlen(header));
    p = eol + 1;

    const long dt_ms = (long)(s->dt_s * 1000.0 + 0.5);
    long prev_ms = -1;
    size_t row = 0;
    while (*p != '\0') {
        assert_true(row < s->rows);
        long t_ms;
        const char *comma = strchr(p, ',');
        assert_non_null(comma);
        if (iso_time) {
            int yy, mo, dd, hh, mi, ss, ms, zh, zm, consumed = 0;
            int got = sscanf(p, "%4d-%2d-%2dT%2d:%2d:%2d.%3d+%2d:%2d%n", &yy, &mo,
                             &dd, &hh, &mi, &ss, &ms, &zh, &zm, &consumed);
            assert_int_equal(got, 9);
            assert_ptr_equal(p + consumed, comma);
            assert_true(yy == 2026 && mo == 3 && dd == 14 && zh == 1 && zm == 0);
            t_ms = ((hh * 60L + mi) * 60L + ss) * 1000L + ms;
            if (row == 0)
                assert_int_equal(t_ms, 8L * 3600 * 1000);   /* 08:00:00.000 */
        } else {
            char *end;
            double t = strtod(p, &end);
            assert_ptr_equal(end, comma);
            t_ms = (long)(t * 1000.0 + 0.5);
            if (row == 0)
                assert_int_equal(t_ms, 0);
        }
        /* Strictly increasing with exactly the stated interval. */
        if (row > 0)
            assert_int_equal(t_ms - prev_ms, dt_ms);
        prev_ms = t_ms;
        p = comma;
        for (size_t i = 0; i < s->n; i++) {
            assert_true(*p == ',');
            char *end;
            y[row * s->n + i] = strtod(p + 1, &end);
            assert_true(end > p + 1);
            p = end;
        }
        assert_true(*p == '\n');
        p++;
        row++;
    }
    assert_int_equal(row, s->rows);
    return y;
}

static void test_rows_header_and_time_column(void **state)
{
    (void)state;
    for (size_t i = 0; i < el_demo_count(); i++) {
        const el_demo_info *d = el_demo_get(i);
        const el_demo_system *s = el_demo_system_find(d->name);
        el_buf csv = {0};
        generate(d->name, &csv);
        double *y = parse_csv(s, csv.data, strcmp(d->name, "booster-pump") == 0);
        free(y);
        el_buf_free(&csv);
    }
    const el_demo_system *b = el_demo_system_find("booster-pump");
    const el_demo_system *r = el_demo_system_find("rig-test");
    const el_demo_system *f = el_demo_system_find("fan-warmup");
    assert_int_equal(b->rows, 12000);   /* 10 min at 20 Hz */
    assert_int_equal(r->rows, 9000);    /* 90 s at 100 Hz */
    assert_int_equal(f->rows, 24000);   /* 40 min at 10 Hz */
    assert_int_equal(f->rows % f->drift_segments, 0);   /* whole segments */
}

/* Characteristic polynomial coefficients c[0..n] (c[n] = 1) of A by the
 * Faddeev-LeVerrier recursion: M_k = A M_{k-1} + c_{n-k+1} I,
 * c_{n-k} = -tr(A M_k) / k. Plain loops, independent of the library. */
static void char_poly(size_t n, const double *a, double *c)
{
    double m[16] = {0}, am[16], next[16];
    c[n] = 1.0;
    for (size_t k = 1; k <= n; k++) {
        for (size_t i = 0; i < n; i++)
            for (size_t j = 0; j < n; j++) {
                double s = 0.0;
                for (size_t l = 0; l < n; l++)
                    s += a[i + l * n] * m[l + j * n];
                am[i + j * n] = s;
            }
        for (size_t idx = 0; idx < n * n; idx++)
            next[idx] = am[idx];
        for (size_t i = 0; i < n; i++)
            next[i + i * n] += c[n - k + 1];
        memcpy(m, next, sizeof m);
        double tr = 0.0;
        for (size_t i = 0; i < n; i++)
            for (size_t l = 0; l < n; l++)
                tr += a[i + l * n] * m[l + i * n];
        c[n - k] = -tr / (double)k;
    }
}

/* The truth values lre/lim are the eigenvalues of a (n x n). */
static void check_truth(size_t n, const double *a, const double *lre, const double *lim)
{
    double c[5];
    char_poly(n, a, c);
    for (size_t k = 0; k < n; k++) {
            /* p(lambda) by Horner in complex arithmetic, against the size
             * of its terms: the truth values are numpy eigenvalues printed
             * to 17 digits, so p(lambda) is rounding noise, ~1e-15 of the
             * scale; 1e-10 still rejects a wrong digit in the 7th place
             * (which moves p by ~1e-7 of the scale). */
        double re = lre[k], im = lim[k];
        double pr = c[n], pi = 0.0, scale = 0.0, mag = sqrt(re * re + im * im);
        for (size_t j = n; j-- > 0;) {
            double tr = pr * re - pi * im + c[j];
            pi = pr * im + pi * re;
            pr = tr;
        }
        for (size_t j = 0; j <= n; j++)
            scale += fabs(c[j]) * pow(mag, (double)j);
        assert_close(hypot(pr, pi) / scale, 0.0, 0.0, 1e-10);
    }
    /* Conjugate pairs, least damped first. */
    for (size_t k = 0; k + 1 < n; k += 2) {
        assert_close(lre[k], lre[k + 1], 0.0, 0.0);
        assert_close(lim[k], -lim[k + 1], 0.0, 0.0);
        if (k + 2 < n)
            assert_true(lre[k] >= lre[k + 2]);
    }
}

static void test_truth_eigenvalues_belong_to_a(void **state)
{
    (void)state;
    for (size_t d = 0; d < el_demo_count(); d++) {
        const el_demo_system *s = el_demo_system_find(el_demo_get(d)->name);
        check_truth(s->n, s->a, s->lambda_re, s->lambda_im);
        if (s->a_end != NULL)
            check_truth(s->n, s->a_end, s->lambda_re_end, s->lambda_im_end);
    }
    /* The intended dynamics (datasets/README.md): a stable booster mode,
     * one growing rig mode. */
    assert_true(el_demo_system_find("booster-pump")->lambda_re[0] < 0.0);
    assert_true(el_demo_system_find("rig-test")->lambda_re[0] > 0.0);
    assert_true(el_demo_system_find("rig-test")->lambda_re[2] < 0.0);
    /* The fan's margin shrinks: the end is less damped but still stable. */
    const el_demo_system *f = el_demo_system_find("fan-warmup");
    assert_true(f->lambda_re_end[0] > f->lambda_re[0] && f->lambda_re_end[0] < 0.0);
}

static void test_readme_states_the_truth(void **state)
{
    (void)state;
    size_t len;
    char *readme = read_file("datasets/README.md", &len);
    if (readme == NULL)
        fail_msg("cannot read datasets/README.md");
    for (size_t i = 0; i < el_demo_count(); i++) {
        const el_demo_info *d = el_demo_get(i);
        if (strstr(readme, d->truth) == NULL)
            fail_msg("datasets/README.md does not contain the truth line of %s:\n%s",
                     d->name, d->truth);
        assert_non_null(strstr(readme, d->file_name));
        char cmd[128];
        snprintf(cmd, sizeof cmd, "eigenlog demo %s -o datasets", d->name);
        assert_non_null(strstr(readme, cmd));
    }
    free(readme);
}

/* Ad and Qd of the scenario's segment seg by an independent
 * el_discretise call (A at the segment's middle for a drifting one). */
static void step_map(const el_demo_system *s, size_t seg, double *ad, double *qd)
{
    size_t n = s->n;
    double a[16], work[32 * 16 + 8];
    int iwork[8];
    for (size_t i = 0; i < n * n; i++)
        a[i] = s->a_end == NULL ? s->a[i]
                                : s->a[i] + (s->a_end[i] - s->a[i]) * ((double)seg + 0.5)
                                                / (double)s->drift_segments;
    el_error err;
    el_error_clear(&err);
    assert_int_equal(el_discretise(n, a, s->q, s->dt_s, ad, qd, NULL, work, iwork, &err),
                     EL_OK);
}

static void test_noise_factor_is_lower_triangular(void **state)
{
    (void)state;
    /* The simulation's noise factor is the unpivoted Cholesky factor of Qd
     * (datasets/README.md): lower triangular with a non-negative diagonal
     * in every segment. A pivoted factor (the cause of logs that differed
     * between CPUs: with the fan's isotropic noise the diagonal of Qd ties
     * and the pivot order followed the BLAS kernel's last bits) is a row
     * permutation of a triangle and fails this for the booster and the rig,
     * whose larger diagonal entry is not the first. G G' = Qd to 40-bit
     * rounding of G (relative 2^-40 = 9e-13 per entry; 1e-11 normwise). */
    for (size_t d = 0; d < el_demo_count(); d++) {
        const el_demo_system *s = el_demo_system_find(el_demo_get(d)->name);
        const size_t n = s->n, segments = s->a_end != NULL ? s->drift_segments : 1;
        for (size_t seg = 0; seg < segments; seg++) {
            double ad[16], g[16], ad2[16], qd[16];
            el_error err;
            el_error_clear(&err);
            assert_int_equal(el_demo_segment_map(s, seg, ad, g, &err), EL_OK);
            step_map(s, seg, ad2, qd);
            double scale = 0.0;
            for (size_t i = 0; i < n * n; i++)
                scale = fmax(scale, fabs(qd[i]));
            for (size_t j = 0; j < n; j++) {
                assert_true(g[j + j * n] >= 0.0);
                for (size_t i = 0; i < j; i++)
                    assert_close(g[i + j * n], 0.0, 0.0, 0.0);
                for (size_t i = 0; i < n; i++) {
                    double ggt = 0.0;
                    for (size_t l = 0; l < n; l++)
                        ggt += g[i + l * n] * g[j + l * n];
                    assert_close(ggt, qd[i + j * n], 0.0, 1e-11 * scale);
                }
            }
        }
    }
}

static void test_one_step_residual_covariance(void **state)
{
    (void)state;
    /* With the true Ad, r[k] = d[k+1] - Ad d[k] (d = y - operating point)
     * is Ad-independent of the state: r = w[k] + v[k+1] - Ad v[k], so its
     * covariance is S = Qd + R + Ad R Ad', R = diag(sd^2 + h^2/12) with h
     * the printed resolution (rounding noise, common practice). This holds
     * for the growing mode too, and checks the process-noise scaling of
     * the simulation against an independent el_discretise call. Sample
     * covariance of N residuals: standard error sqrt((S_ii S_jj + S_ij^2)/N)
     * for Gaussian data; each entry within 4 standard errors. */
    for (size_t d = 0; d < el_demo_count(); d++) {
        const el_demo_info *info = el_demo_get(d);
        const el_demo_system *s = el_demo_system_find(info->name);
        const size_t n = s->n;
        el_buf csv = {0};
        generate(info->name, &csv);
        double *y = parse_csv(s, csv.data, strcmp(info->name, "booster-pump") == 0);

        double ad[16], qd[16];
        double r_diag[4], expect[16] = {0};
        for (size_t i = 0; i < n; i++) {
            double h = pow(10.0, -s->decimals[i]);
            r_diag[i] = s->sensor_sd[i] * s->sensor_sd[i] + h * h / 12.0;
        }
        /* A drifting scenario's step k runs with A at the middle of its
         * segment (datasets/README.md): the expected covariance is the
         * mean of the steps' own. */
        size_t seg_rows = s->a_end != NULL ? s->rows / s->drift_segments : s->rows;
        double sum[16] = {0};
        const size_t m = s->rows - 1;
        for (size_t k = 0; k < m; k++) {
            if (k % seg_rows == 0)
                step_map(s, k / seg_rows, ad, qd);
            for (size_t i = 0; i < n; i++)
                for (size_t j = 0; j < n; j++) {
                    double v = qd[i + j * n] + (i == j ? r_diag[i] : 0.0);
                    for (size_t l = 0; l < n; l++)
                        v += ad[i + l * n] * r_diag[l] * ad[j + l * n];
                    expect[i + j * n] += v / (double)m;
                }
            double r[4];
            for (size_t i = 0; i < n; i++) {
                double pred = 0.0;
                for (size_t l = 0; l < n; l++)
                    pred += ad[i + l * n] * (y[k * n + l] - s->operating_point[l]);
                r[i] = (y[(k + 1) * n + i] - s->operating_point[i]) - pred;
            }
            for (size_t i = 0; i < n; i++)
                for (size_t j = 0; j < n; j++)
                    sum[i + j * n] += r[i] * r[j];
        }
        for (size_t i = 0; i < n; i++)
            for (size_t j = 0; j < n; j++) {
                double sij = expect[i + j * n];
                double se = sqrt((expect[i + i * n] * expect[j + j * n] + sij * sij)
                                 / (double)m);
                assert_close(sum[i + j * n] / (double)m, sij, 0.0, 4.0 * se);
            }
        free(y);
        el_buf_free(&csv);
    }
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_list_and_find),
        cmocka_unit_test(test_unknown_name_is_usage_error_with_hint),
        cmocka_unit_test(test_generate_twice_gives_identical_bytes),
        cmocka_unit_test(test_committed_datasets_equal_generator),
        cmocka_unit_test(test_rows_header_and_time_column),
        cmocka_unit_test(test_truth_eigenvalues_belong_to_a),
        cmocka_unit_test(test_noise_factor_is_lower_triangular),
        cmocka_unit_test(test_readme_states_the_truth),
        cmocka_unit_test(test_one_step_residual_covariance),
    };
    return cmocka_run_group_tests_name("demo", tests, NULL, NULL);
}
