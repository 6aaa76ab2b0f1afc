/* Tests of el_html: a report built from a hand-made assessment is
 * well-formed enough for a browser, holds every figure with the data it
 * was given (cloud points = replicates x modes under the downsampling
 * rule of el_html.h, lines within the point cap), escapes text, never
 * prints a non-finite number and is the same bytes on every run. */
#include "el_test.h"

#include <ctype.h>
#include <stdlib.h>
#include <string.h>

#include "el_html.h"

/* Everything the hand-made assessment allocates, freed in one place. */
typedef struct {
    void *items[128];
    size_t count;
} arena;

static void *keep(arena *a, size_t bytes)
{
    assert_true(a->count < sizeof a->items / sizeof a->items[0]);
    void *p = calloc(1, bytes);
    assert_non_null(p);
    a->items[a->count++] = p;
    return p;
}

static char *keep_str(arena *a, const char *s)
{
    char *p = keep(a, strlen(s) + 1);
    memcpy(p, s, strlen(s) + 1);
    return p;
}

static void arena_free(arena *a)
{
    for (size_t i = 0; i < a->count; i++)
        free(a->items[i]);
    a->count = 0;
}

typedef struct {
    arena mem;
    el_assessment r;
    el_assess_options opt;
    el_spectra spectra;
} fixture;

#define NAME0 "p<&>q"
#define NAME0_ESCAPED "p&lt;&amp;&gt;q"

/* Series: n_channels damped oscillations plus a deterministic wobble
 * (so min and max differ in every downsampling run). */
static void make_series(fixture *f, size_t n_channels, size_t n)
{
    el_series *s = &f->r.series;
    s->n_samples = n;
    s->n_channels = n_channels;
    s->dt = 0.01;
    s->t0 = 5.0;
    s->values = keep(&f->mem, n * n_channels * sizeof(double));
    s->names = keep(&f->mem, n_channels * sizeof(char *));
    s->units = keep(&f->mem, n_channels * sizeof(char *));
    s->rows_used = n;
    for (size_t c = 0; c < n_channels; c++) {
        char name[32];
        snprintf(name, sizeof name, "ch%zu", c);
        s->names[c] = keep_str(&f->mem, c == 0 ? NAME0 : name);
        s->units[c] = keep_str(&f->mem, c == 0 ? "bar" : "");
        for (size_t k = 0; k < n; k++) {
            double t = (double)k * s->dt;
            s->values[c * n + k] = 3.0 * (double)c + exp(-0.2 * t) * cos(2.0 * t + (double)c) +
                                   0.05 * sin(37.0 * t * (1.0 + 0.1 * (double)c));
        }
    }
    el_table *tb = &f->r.table;
    snprintf(tb->source, sizeof tb->source, "hand <made>.csv");
    tb->n_rows = n;
    tb->n_columns = n_channels + 1;
    tb->time_column = 0;
    tb->units = keep(&f->mem, (n_channels + 1) * sizeof(char *));
    tb->names = keep(&f->mem, (n_channels + 1) * sizeof(char *));
    for (size_t c = 0; c <= n_channels; c++) {
        tb->units[c] = keep_str(&f->mem, c == 0 ? "s" : "");
        tb->names[c] = keep_str(&f->mem, c == 0 ? "t" : s->names[c - 1]);
    }
}

/* Model with Ad = 0.99 I + small coupling, no lags. */
static void make_model(fixture *f)
{
    el_model *m = &f->r.model;
    size_t n = f->r.series.n_channels;
    m->n_channels = n;
    m->state_dim = n;
    m->rank = n;
    m->n_pairs = f->r.series.n_samples - 1;
    m->dt = f->r.series.dt;
    m->ad = keep(&f->mem, n * n * sizeof(double));
    m->offset = keep(&f->mem, n * sizeof(double));
    m->channel_r2 = keep(&f->mem, n * sizeof(double));
    m->operating_point = keep(&f->mem, n * sizeof(double));
    m->operating_point_ok = 1;
    m->fit_r2 = 0.98;
    for (size_t i = 0; i < n; i++) {
        m->ad[i * n + i] = 0.99;
        if (i + 1 < n)
            m->ad[i * n + i + 1] = 0.01;
        m->offset[i] = 0.03 * (double)i;
        m->channel_r2[i] = 0.97;
        m->operating_point[i] = 3.0 * (double)i;
    }
}

static void make_modes(fixture *f, size_t n_modes)
{
    el_modes *md = &f->r.modes;
    size_t n = f->r.series.n_channels;
    md->n_modes = n_modes;
    md->n_eigenvalues = 2 * n_modes;
    md->n_channels = n;
    md->modes = keep(&f->mem, n_modes * sizeof(el_mode));
    for (size_t i = 0; i < n_modes; i++) {
        el_mode *m = &md->modes[i];
        m->pair = 1;
        m->lambda_re = -0.2 - 0.5 * (double)i;
        m->lambda_im = 2.0 + 3.0 * (double)i;
        m->frequency_hz = m->lambda_im / (2 * M_PI);
        m->damping_ratio = -m->lambda_re / hypot(m->lambda_re, m->lambda_im);
        m->decay_rate = -m->lambda_re;
        /* NaN on purpose: must come out as "n/a", never "nan". */
        m->time_constant_s = i == 0 ? NAN : 1.0 / m->decay_rate;
        m->shape_magnitude = keep(&f->mem, n * sizeof(double));
        m->shape_phase_deg = keep(&f->mem, n * sizeof(double));
        for (size_t c = 0; c < n; c++) {
            m->shape_magnitude[c] = c == 0 ? 1.0 : 0.4;
            m->shape_phase_deg[c] = c == 0 ? 0.0 : -75.0;
        }
    }
}

/* Bootstrap: replicate r of mode m scatters around the estimate on a
 * deterministic pattern; `bad` replicates get a NaN (left out by rule). */
static void make_boot(fixture *f, size_t replicates, int plane, size_t bad)
{
    el_boot_result *b = &f->r.boot;
    size_t nm = f->r.modes.n_modes;
    b->replicates = replicates;
    b->n_modes = nm;
    b->level = 0.95;
    b->seed = 7;
    b->block_length = 25;
    b->bounds = keep(&f->mem, nm * sizeof(el_mode_bounds));
    b->lambda_re = keep(&f->mem, replicates * nm * sizeof(double));
    b->lambda_im = keep(&f->mem, replicates * nm * sizeof(double));
    for (size_t m = 0; m < nm; m++) {
        const el_mode *e = &f->r.modes.modes[m];
        for (size_t k = 0; k < replicates; k++) {
            double u = sin(12.9898 * (double)(k + 1)), w = cos(78.233 * (double)(k + 1));
            b->lambda_re[k * nm + m] = e->lambda_re + 0.05 * u;
            b->lambda_im[k * nm + m] = e->lambda_im + 0.1 * w;
        }
        b->bounds[m].re = (el_interval){e->lambda_re - 0.05, e->lambda_re + 0.05};
        b->bounds[m].im = (el_interval){e->lambda_im - 0.1, e->lambda_im + 0.1};
        b->bounds[m].frequency_hz = (el_interval){e->frequency_hz * 0.95, e->frequency_hz * 1.05};
        b->bounds[m].damping_ratio = (el_interval){0.05, NAN};
        b->bounds[m].decay_rate = (el_interval){0.15, 0.25};
    }
    b->p_stable = 0.97;
    if (plane) {
        b->has_plane = 1;
        b->trace_samples = keep(&f->mem, replicates * sizeof(double));
        b->det_samples = keep(&f->mem, replicates * sizeof(double));
        for (size_t k = 0; k < replicates; k++) {
            b->trace_samples[k] = 2 * b->lambda_re[k * nm];
            b->det_samples[k] = 4.04 + 0.2 * cos(3.1 * (double)k);
        }
        b->region_probability[EL_REGION_SPIRAL_SINK] = 1.0;
    }
    for (size_t k = 0; k < bad; k++)
        b->lambda_re[(3 + 7 * k) * nm] = NAN;
}

static void make_verdict(fixture *f, int plane)
{
    el_verdict *v = &f->r.verdict;
    v->stability = EL_STABLE;
    v->stability_name = "stable";
    snprintf(v->type, sizeof v->type, "spiral sink");
    v->p_stable = f->r.boot.replicates ? 0.97 : NAN;
    v->margin_decay_rate = 0.2;
    v->margin_damping_ratio = 0.0995;
    v->has_plane = plane;
    v->trace = plane ? -0.4 : NAN;
    v->determinant = plane ? 4.04 : NAN;
    v->discriminant = plane ? 0.16 - 16.16 : NAN;
    v->region = plane ? EL_REGION_SPIRAL_SINK : EL_REGION_NONE;
}

static void make_spectra(fixture *f, size_t n_bins)
{
    el_spectra *sp = &f->spectra;
    size_t n = f->r.series.n_channels;
    sp->n_channels = n;
    sp->n_bins = n_bins;
    sp->segment_length = 2 * (n_bins - 1);
    sp->n_segments = 3;
    sp->dt = f->r.series.dt;
    sp->df_hz = 1.0 / ((double)sp->segment_length * sp->dt);
    sp->frequency_hz = keep(&f->mem, n_bins * sizeof(double));
    sp->psd = keep(&f->mem, n_bins * n * sizeof(double));
    for (size_t k = 0; k < n_bins; k++) {
        sp->frequency_hz[k] = (double)k * sp->df_hz;
        for (size_t c = 0; c < n; c++) {
            double x = sp->frequency_hz[k] - 0.318;
            sp->psd[c * n_bins + k] = 1e-4 * (1.2 + sin((double)k)) + 1.0 / (1.0 + 400 * x * x);
        }
    }
    sp->psd[0] = 0.0;   /* a removed mean: must not reach the log axis */
}

/* 2 channels, 1 mode (plane), 3000 samples, 300 replicates (2 bad). */
static void fixture_plane(fixture *f)
{
    memset(f, 0, sizeof *f);
    make_series(f, 2, 3000);
    make_model(f);
    make_modes(f, 1);
    make_boot(f, 300, 1, 2);
    make_verdict(f, 1);
    make_spectra(f, 2049);
    el_assess_defaults(&f->opt);
    f->opt.boot.level = 0.95;
    el_warnings_add(&f->r.warnings, "a warning with <b>markup</b> & an ampersand");
    el_warnings_add(&f->r.input_warnings, "an input warning");
}

static void fixture_free(fixture *f)
{
    el_warnings_free(&f->r.warnings);
    el_warnings_free(&f->r.input_warnings);
    arena_free(&f->mem);
}

static char *report(fixture *f, const el_spectra *sp)
{
    el_buf out = {0};
    el_error err;
    el_error_clear(&err);
    el_status st = el_html_report(&f->r, &f->opt, sp, &out, &err);
    if (st != EL_OK)
        fail_msg("el_html_report: %s", err.message);
    assert_non_null(out.data);
    return out.data;
}

/* ---------------------------------------------------------------- helpers */

static size_t count_of(const char *hay, const char *needle)
{
    size_t n = 0;
    for (const char *p = strstr(hay, needle); p; p = strstr(p + 1, needle))
        n++;
    return n;
}

/* The text of the figure with this id (up to its </figure>), copied. */
static char *figure(const char *html, const char *id)
{
    char key[64];
    snprintf(key, sizeof key, "<figure id=\"%s\"", id);
    const char *a = strstr(html, key);
    if (a == NULL)
        return NULL;
    const char *b = strstr(a, "</figure>");
    assert_non_null(b);
    size_t n = (size_t)(b - a);
    char *s = malloc(n + 1);
    assert_non_null(s);
    memcpy(s, a, n);
    s[n] = '\0';
    return s;
}

/* Value of attribute attr in the element starting at tag. */
static const char *attr(const char *tag, const char *attr_name, size_t *len)
{
    char key[48];
    snprintf(key, sizeof key, " %s=\"", attr_name);
    const char *end = strchr(tag, '>');
    const char *a = strstr(tag, key);
    if (a == NULL || (end && a > end))
        return NULL;
    a += strlen(key);
    *len = (size_t)(strchr(a, '"') - a);
    return a;
}

/* Points in path data: for clouds, subpaths ("M" count); for lines, the
 * number pairs. */
static size_t moves_in(const char *d, size_t len)
{
    size_t n = 0;
    for (size_t i = 0; i < len; i++)
        n += d[i] == 'M';
    return n;
}

static size_t pairs_in(const char *d, size_t len)
{
    size_t numbers = 0;
    int in = 0;
    for (size_t i = 0; i < len; i++) {
        int part = isdigit((unsigned char)d[i]) || d[i] == '.' || d[i] == '-';
        if (part && !in)
            numbers++;
        in = part;
    }
    return numbers / 2;
}

/* Sums the drawn points of every <path class="CLS" in text; checks each
 * path's data-points against its own drawing. */
static size_t path_points(const char *text, const char *cls, int cloud, size_t *paths)
{
    char key[64];
    snprintf(key, sizeof key, "<path class=\"%s", cls);
    size_t total = 0;
    *paths = 0;
    for (const char *p = strstr(text, key); p; p = strstr(p + 1, key)) {
        size_t dl = 0, pl = 0;
        const char *d = attr(p, "d", &dl);
        const char *dp = attr(p, "data-points", &pl);
        assert_non_null(d);
        assert_non_null(dp);
        size_t drawn = cloud ? moves_in(d, dl) : pairs_in(d, dl);
        assert_int_equal(drawn, strtoul(dp, NULL, 10));
        total += drawn;
        (*paths)++;
    }
    return total;
}

/* No word "nan", "inf" or "infinity" (any case) anywhere: a non-finite
 * number printed by printf. Words that merely contain them ("infinite",
 * "information") are fine. */
static void assert_no_nonfinite_text(const char *html)
{
    const char *p = html;
    while (*p) {
        if (!isalpha((unsigned char)*p)) {
            p++;
            continue;
        }
        const char *w = p;
        while (isalpha((unsigned char)*p))
            p++;
        size_t n = (size_t)(p - w);
        char word[16] = {0};
        if (n < sizeof word) {
            for (size_t i = 0; i < n; i++)
                word[i] = (char)tolower((unsigned char)w[i]);
            if (!strcmp(word, "nan") || !strcmp(word, "inf") || !strcmp(word, "infinity"))
                fail_msg("non-finite number in the output near: %.40s", w > html + 20 ? w - 20 : w);
        }
    }
}

/* ---------------------------------------------------------------- tests */

static void test_well_formed_and_ordered(void **state)
{
    (void)state;
    fixture f;
    fixture_plane(&f);
    char *html = report(&f, &f.spectra);
    assert_true(strncmp(html, "<!DOCTYPE html>", 15) == 0);
    assert_non_null(strstr(html, "</html>\n"));
    assert_int_equal(count_of(html, "<svg"), count_of(html, "</svg>"));
    assert_int_equal(count_of(html, "<figure"), count_of(html, "</figure>"));
    assert_int_equal(count_of(html, "<table"), count_of(html, "</table>"));
    assert_int_equal(count_of(html, "<g ") + count_of(html, "<g>"), count_of(html, "</g>"));
    /* Self-contained: no script, no reference to anything outside. */
    assert_null(strstr(html, "<script"));
    assert_null(strstr(html, "http"));
    /* Order of the page: verdict, warnings, caution, figures, modes. */
    const char *ids[] = {"id=\"verdict\"", "id=\"warnings\"", "id=\"caution\"",
                         "id=\"fig-eigenvalues\"", "id=\"fig-plane\"", "id=\"fig-timeseries-0\"",
                         "id=\"fig-timeseries-1\"", "id=\"fig-spectrum\"", "id=\"fig-modes\""};
    const char *prev = html;
    for (size_t i = 0; i < sizeof ids / sizeof ids[0]; i++) {
        const char *at = strstr(html, ids[i]);
        if (at == NULL)
            fail_msg("missing %s", ids[i]);
        assert_true(at > prev);
        assert_int_equal(count_of(html, ids[i]), 1);
        prev = at;
    }
    assert_null(strstr(html, "fig-timeseries-2"));
    /* The caution is the library's text, whole (escaped: it holds an
     * apostrophe). */
    el_buf caution = {0};
    assert_int_equal(el_html_escape(&caution, el_assess_caution()), EL_OK);
    assert_non_null(strstr(html, caution.data));
    el_buf_free(&caution);
    free(html);
    fixture_free(&f);
}

/* Cloud rule (el_html.h): R * M = 300 <= 4000, so every replicate is
 * drawn: 300 points less the 2 replicates with a NaN; the plane cloud
 * draws the trace/determinant samples, all 300 finite. The conjugate
 * mirror and the close-up are separate classes, not counted here. */
static void test_clouds_all_replicates(void **state)
{
    (void)state;
    fixture f;
    fixture_plane(&f);
    char *html = report(&f, &f.spectra);
    char *eig = figure(html, "fig-eigenvalues");
    assert_non_null(eig);
    size_t paths;
    assert_int_equal(path_points(eig, "cloud\"", 1, &paths), 300 * 1 - 2);
    assert_int_equal(paths, 1);
    assert_non_null(strstr(eig, "class=\"boundary\""));
    assert_non_null(strstr(eig, "class=\"stable-side\""));
    assert_non_null(strstr(eig, "2 replicate values without a finite eigenvalue"));
    char *plane = figure(html, "fig-plane");
    assert_non_null(plane);
    assert_int_equal(path_points(plane, "cloud\"", 1, &paths), 300);
    assert_int_equal(paths, 1);
    assert_int_equal(path_points(plane, "cloud-zoom\"", 1, &paths), 300);
    assert_non_null(strstr(plane, "class=\"parabola\""));
    free(plane);
    free(eig);
    free(html);
    fixture_free(&f);
}

/* 4 channels, 2 modes, 2500 replicates, no plane: R * M = 5000 > 4000,
 * stride ceil(5000 / 4000) = 2, replicates 0, 2, ..., 2498 are drawn:
 * 1250 per mode, 2500 in all. No fig-plane for a 4-state model. No
 * spectra given: no spectrum figure. */
static void test_clouds_downsampled_no_plane(void **state)
{
    (void)state;
    fixture f;
    memset(&f, 0, sizeof f);
    make_series(&f, 4, 800);
    make_model(&f);
    make_modes(&f, 2);
    make_boot(&f, 2500, 0, 0);
    make_verdict(&f, 0);
    el_assess_defaults(&f.opt);
    char *html = report(&f, NULL);
    assert_null(strstr(html, "fig-plane"));
    assert_null(strstr(html, "fig-spectrum"));
    for (int c = 0; c < 4; c++) {
        char id[32];
        snprintf(id, sizeof id, "fig-timeseries-%d", c);
        char *ts = figure(html, id);
        assert_non_null(ts);
        free(ts);
    }
    char *eig = figure(html, "fig-eigenvalues");
    size_t paths;
    assert_int_equal(path_points(eig, "cloud\"", 1, &paths), 2500);
    assert_int_equal(paths, 2);
    assert_non_null(strstr(eig, "every 2nd replicate drawn"));
    free(eig);
    free(html);
    fixture_free(&f);
}

/* Lines: N = 3000 > 1500, so the full-window panel holds at most 1500
 * points per line (750 runs x min and max; the wobble makes min != max
 * in every run, so exactly 1500), and the detail panel shows its first
 * max(200, 3000 / 12) = 250 samples one point each. Spectrum: 2048
 * plotted bins (bin 0 left out) > 1500, so 1500 points per channel. */
static void test_lines_downsampled(void **state)
{
    (void)state;
    fixture f;
    fixture_plane(&f);
    char *html = report(&f, &f.spectra);
    char *ts = figure(html, "fig-timeseries-0");
    assert_non_null(ts);
    size_t paths;
    size_t measured = path_points(ts, "line measured", 0, &paths);
    assert_int_equal(paths, 2);
    assert_int_equal(measured, 1500 + 250);
    size_t one = path_points(ts, "line one-step", 0, &paths);
    assert_int_equal(paths, 2);
    /* One-step starts at sample 1: full panel 1500, detail 249. */
    assert_int_equal(one, 1500 + 249);
    size_t free_run = path_points(ts, "line free-run", 0, &paths);
    assert_int_equal(paths, 2);
    assert_true(free_run >= 1000 && free_run <= 1500 + 250);
    free(ts);
    char *sp = figure(html, "fig-spectrum");
    assert_non_null(sp);
    assert_int_equal(path_points(sp, "line psd", 0, &paths), 2 * 1500);
    assert_int_equal(paths, 2);
    /* One vertical line per oscillatory mode per channel panel. */
    assert_int_equal(count_of(sp, "class=\"modeline\" data-mode=\"1\""), 2);
    free(sp);
    free(html);
    fixture_free(&f);
}

static void test_escaping_and_units(void **state)
{
    (void)state;
    fixture f;
    fixture_plane(&f);
    char *html = report(&f, &f.spectra);
    assert_null(strstr(html, NAME0));
    assert_non_null(strstr(html, NAME0_ESCAPED " [bar]"));
    assert_null(strstr(html, "hand <made>"));
    assert_non_null(strstr(html, "hand &lt;made&gt;.csv"));
    assert_null(strstr(html, "<b>markup</b>"));
    assert_non_null(strstr(html, "&lt;b&gt;markup&lt;/b&gt; &amp; an ampersand"));
    /* Axis units: time in s, rates 1/s, frequency Hz, PSD in unit^2/Hz. */
    assert_non_null(strstr(html, "time [s]"));
    assert_non_null(strstr(html, "Re &lambda; (growth rate) [1/s]"));
    assert_non_null(strstr(html, "frequency [Hz]"));
    assert_non_null(strstr(html, "PSD [(bar)&sup2;/Hz]"));
    /* el_html_escape alone. */
    el_buf b = {0};
    assert_int_equal(el_html_escape(&b, "a<b>&\"c'"), EL_OK);
    assert_string_equal(b.data, "a&lt;b&gt;&amp;&quot;c&#39;");
    el_buf_free(&b);
    free(html);
    fixture_free(&f);
}

/* NaN inputs (a time constant, an upper bound) and a run without a
 * bootstrap (p_stable NaN) show "n/a", never a non-finite number. */
static void test_no_nonfinite_text(void **state)
{
    (void)state;
    fixture f;
    fixture_plane(&f);
    char *html = report(&f, &f.spectra);
    assert_no_nonfinite_text(html);
    assert_non_null(strstr(html, "n/a"));
    free(html);
    /* Without a bootstrap. */
    f.r.boot.replicates = 0;
    f.r.boot.bounds = NULL;
    f.r.verdict.p_stable = NAN;
    html = report(&f, NULL);
    assert_no_nonfinite_text(html);
    assert_non_null(strstr(html, "P(stable)</div><div class=\"tv\">n/a"));
    assert_int_equal(count_of(html, "<path class=\"cloud\""), 0);
    free(html);
    fixture_free(&f);
}

static void test_deterministic(void **state)
{
    (void)state;
    fixture f;
    fixture_plane(&f);
    char *a = report(&f, &f.spectra);
    char *b = report(&f, &f.spectra);
    assert_string_equal(a, b);
    free(a);
    free(b);
    fixture_free(&f);
}

static void test_incomplete_input(void **state)
{
    (void)state;
    el_assessment r;
    memset(&r, 0, sizeof r);
    el_buf out = {0};
    el_error err;
    assert_int_equal(el_html_report(NULL, NULL, NULL, &out, &err), EL_ERR_INTERNAL);
    assert_int_equal(el_html_report(&r, NULL, NULL, &out, &err), EL_ERR_INTERNAL);
    fixture f;
    fixture_plane(&f);
    f.spectra.n_channels = 3;
    assert_int_equal(el_html_report(&f.r, &f.opt, &f.spectra, &out, &err), EL_ERR_INTERNAL);
    el_buf_free(&out);
    fixture_free(&f);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_well_formed_and_ordered),
        cmocka_unit_test(test_clouds_all_replicates),
        cmocka_unit_test(test_clouds_downsampled_no_plane),
        cmocka_unit_test(test_lines_downsampled),
        cmocka_unit_test(test_escaping_and_units),
        cmocka_unit_test(test_no_nonfinite_text),
        cmocka_unit_test(test_deterministic),
        cmocka_unit_test(test_incomplete_input),
    };
    return cmocka_run_group_tests_name("el_html", tests, NULL, NULL);
}
