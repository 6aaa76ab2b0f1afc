/* Tests of el_html: a report built from a hand-made assessment is
 * well-formed enough for a browser, holds every figure with the data it
 * was given (cloud points = replicates x modes under the downsampling
 * rule of el_html.h, lines within the point cap), escapes text, never
 * prints a non-finite number and is the same bytes on every run. The
 * track report, from a hand-made el_track_result, is checked the same
 * way: one mark per window, the trend and its extrapolation only when
 * they exist, every bound inside the plot. */
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
    /* The verdict leads with its word, then one line of reason and one of
     * next step (el_advice), inside the verdict box; the support is a
     * count of replicates in words, not a bare probability; the stable
     * verdict's caution comes first in the cautions. */
    const char *box = strstr(html, "id=\"verdict\"");
    const char *word = strstr(html, "<div class=\"vword\">STABLE</div>");
    const char *why = strstr(html, "<b>Reason:</b>");
    const char *next = strstr(html, "<b>Next step:</b>");
    assert_non_null(word);
    assert_non_null(why);
    assert_non_null(next);
    assert_true(box < word && word < why && why < next && next < strstr(html, "id=\"warnings\""));
    char support[96];
    size_t n = f.r.boot.replicates;
    snprintf(support, sizeof support, "%zu <small>of %zu</small>",
             (size_t)llround(0.97 * (double)n), n);
    assert_non_null(strstr(html, support));
    assert_non_null(strstr(html, "(model error not included)"));
    const char *cautions = strstr(html, "id=\"caution\"");
    assert_non_null(cautions);
    assert_non_null(strstr(cautions, "not a licence to raise load, change settings or bypass "
                                     "protection"));
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
    assert_non_null(strstr(html, "bootstrap support</div><div class=\"tv\">n/a"));
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
    /* Track report: no result, a result without windows. */
    el_track_result t;
    memset(&t, 0, sizeof t);
    assert_int_equal(el_html_track_report(NULL, NULL, &out, &err), EL_ERR_INTERNAL);
    assert_int_equal(el_html_track_report(&t, NULL, &out, &err), EL_ERR_INTERNAL);
    assert_int_equal(out.length, 0);
    el_buf_free(&out);
    fixture_free(&f);
}

/* ---------------------------------------------------------------- track */

#define TRACK_WINDOWS 6
#define TRACK_FAILED 2                      /* index of the failed window */
#define TRACK_ERROR "singular fit: <&> in the data"
#define TRACK_ERROR_ESCAPED "singular fit: &lt;&amp;&gt; in the data"

/* Six windows of 100 time units, no overlap; window 2 failed, window 4
 * has no damping ratio. Margin offset - 0.0008 t at the middle t, bounds
 * +-0.06; the trend fields are set to a line of that slope through the
 * last window's middle (t = 550). ttz_hi: upper end of the time to zero
 * (+inf: not bounded); the time to zero exists only for a positive
 * margin on the line, as el_track_fit_trend gives it. */
static void make_track(el_track_result *r, double offset, el_trend_class trend, double ttz_hi)
{
    memset(r, 0, sizeof *r);
    r->n_windows = TRACK_WINDOWS;
    r->windows = calloc(TRACK_WINDOWS, sizeof *r->windows);
    assert_non_null(r->windows);
    r->window = r->step = 100.0;
    r->span_to = 100.0 * TRACK_WINDOWS;
    r->n_channels = 2;
    r->level = 0.95;
    for (size_t i = 0; i < TRACK_WINDOWS; i++) {
        el_track_window *w = &r->windows[i];
        w->t_from = 100.0 * (double)i;
        w->t_to = w->t_from + 100.0;
        snprintf(w->from_text, sizeof w->from_text, "%g", w->t_from);
        snprintf(w->to_text, sizeof w->to_text, "%g", w->t_to);
        if (i == TRACK_FAILED) {
            snprintf(w->error, sizeof w->error, "%s", TRACK_ERROR);
            continue;
        }
        w->ok = 1;
        r->n_ok++;
        w->margin = offset - 0.0008 * (w->t_from + 50.0);
        w->margin_lo = w->margin - 0.06;
        w->margin_hi = w->margin + 0.06;
        w->margin_sd = 0.03;
        w->stability = w->margin > 0 ? EL_STABLE : EL_UNSTABLE;
        w->p_stable = w->margin > 0 ? 1.0 : 0.0;
        w->method = EL_METHOD_LS;
        w->frequency_hz = 0.8 + 0.002 * (double)i;
        w->damping_ratio = i == 4 ? NAN : w->margin / (2 * M_PI * w->frequency_hz);
        w->n_replicates = 40;
        w->margin_samples = calloc(40, sizeof(double));
        assert_non_null(w->margin_samples);
        for (size_t k = 0; k < 40; k++)
            w->margin_samples[k] = w->margin + 0.03 * sin(1.7 * (double)(k + 7 * i));
    }
    r->has_trend = 1;
    r->slope = -0.0008;
    r->slope_lo = -0.0011;
    r->slope_hi = -0.0005;
    r->trend = trend;
    r->p_shrinking = trend == EL_TREND_SHRINKING ? 0.995 : 0.7;
    r->scatter_ratio = 0.8;
    r->widening = 1.0;
    r->margin_now = offset - 0.0008 * 550.0;
    r->time_to_zero = r->time_to_zero_lo = r->time_to_zero_hi = NAN;
    if (r->margin_now > 0) {
        r->time_to_zero = r->margin_now / 0.0008;
        r->time_to_zero_lo = r->margin_now / 0.0011;
        r->time_to_zero_hi = ttz_hi;
    }
    el_warnings_add(&r->warnings, "a <b>warning</b> & more");
}

/* Drops the trend (as el_track_fit_trend leaves it with too few
 * windows), so that no line can stretch the plot's range. */
static void drop_trend(el_track_result *r)
{
    r->has_trend = 0;
    r->trend = EL_TREND_UNDECIDED;
    r->slope = r->slope_lo = r->slope_hi = r->p_shrinking = NAN;
    r->margin_now = r->scatter_ratio = NAN;
    r->time_to_zero = r->time_to_zero_lo = r->time_to_zero_hi = NAN;
}

/* A track result, its page and the page's fig-margin. */
typedef struct {
    el_track_result r;
    char *html;
    char *margin;
} track_page;

/* Every page must pass these whatever its input: balanced markup, self-
 * contained, no non-finite number. */
static void assert_page_sane(const char *html)
{
    assert_true(strncmp(html, "<!DOCTYPE html>", 15) == 0);
    assert_non_null(strstr(html, "</html>\n"));
    assert_int_equal(count_of(html, "<svg"), count_of(html, "</svg>"));
    assert_int_equal(count_of(html, "<figure"), count_of(html, "</figure>"));
    assert_int_equal(count_of(html, "<table"), count_of(html, "</table>"));
    assert_int_equal(count_of(html, "<tr"), count_of(html, "</tr>"));
    assert_int_equal(count_of(html, "<g ") + count_of(html, "<g>"), count_of(html, "</g>"));
    assert_int_equal(count_of(html, "<title"), count_of(html, "</title>"));
    assert_null(strstr(html, "<script"));
    assert_null(strstr(html, "http"));
    assert_no_nonfinite_text(html);
}

/* Renders p->r (log "fan <1>.csv") into p->html and p->margin. */
static void render(track_page *p)
{
    el_track_options opt;
    el_track_defaults(&opt);
    opt.assess.path = "fan <1>.csv";
    el_buf out = {0};
    el_error err;
    el_error_clear(&err);
    if (el_html_track_report(&p->r, &opt, &out, &err) != EL_OK)
        fail_msg("el_html_track_report: %s", err.message);
    assert_non_null(out.data);
    p->html = out.data;
    assert_page_sane(p->html);
    p->margin = figure(p->html, "fig-margin");
    assert_non_null(p->margin);
}

static void page_free(track_page *p)
{
    free(p->html);
    free(p->margin);
    el_track_free(&p->r);
    memset(p, 0, sizeof *p);
}

/* Replaces p with the page of make_track's result after edit (NULL: as
 * made). */
static void page_variant(track_page *p, double offset, el_trend_class trend, double ttz_hi,
                         void (*edit)(el_track_result *))
{
    page_free(p);
    make_track(&p->r, offset, trend, ttz_hi);
    if (edit != NULL)
        edit(&p->r);
    render(p);
}

/* Per-test state: the shrinking case, a finite time to zero. */
static int track_setup(void **state)
{
    track_page *p = calloc(1, sizeof *p);
    if (p == NULL)
        return -1;
    page_variant(p, 0.5, EL_TREND_SHRINKING, 90.0, NULL);
    *state = p;
    return 0;
}

static int track_teardown(void **state)
{
    page_free(*state);
    free(*state);
    return 0;
}

/* Number in attribute name of the element starting at tag. */
static double attr_number(const char *tag, const char *name)
{
    size_t len = 0;
    const char *v = tag ? attr(tag, name, &len) : NULL;
    if (v == NULL)
        fail_msg("no attribute %s in %.60s", name, tag ? tag : "(no element)");
    return strtod(v, NULL);
}

static void test_track_ordered(void **state)
{
    const track_page *p = *state;
    const char *ids[] = {"id=\"verdict\"", "id=\"warnings\"", "id=\"caution\"",
                         "id=\"fig-margin\"", "id=\"fig-damping\"", "id=\"fig-windows\"",
                         "id=\"details\""};
    const char *prev = p->html;
    for (size_t i = 0; i < sizeof ids / sizeof ids[0]; i++) {
        const char *at = strstr(p->html, ids[i]);
        if (at == NULL)
            fail_msg("missing %s", ids[i]);
        assert_true(at > prev);
        assert_int_equal(count_of(p->html, ids[i]), 1);
        prev = at;
    }
    /* The track's cautions (el_track_cautions), whole and escaped: they
     * speak of the windows shown, not of "this window only" (which the
     * single-window caution says and a track of many windows must not). */
    char cautions[EL_ADVICE_MAX_CAUTIONS][EL_ADVICE_TEXT_MAX];
    size_t n_cautions = el_track_cautions(&p->r, cautions);
    assert_true(n_cautions >= 3);
    for (size_t i = 0; i < n_cautions; i++) {
        el_buf caution = {0};
        assert_int_equal(el_html_escape(&caution, cautions[i]), EL_OK);
        assert_non_null(strstr(p->html, caution.data));
        el_buf_free(&caution);
    }
    assert_non_null(strstr(p->html, "covers the windows shown only"));
    assert_non_null(strstr(p->html, "may be lost sooner"));
    assert_non_null(strstr(p->html, "licensed engineering judgement"));
    assert_null(strstr(p->html, "window only"));
    assert_non_null(strstr(p->html, "SHRINKING MARGIN"));
    assert_non_null(strstr(p->html, "style=\"--v:var(--unstable)\""));
    assert_non_null(strstr(p->html, "straight-line extrapolation"));
    /* The windows' table: a header row and one row per window, the
     * failed one marked. */
    char *table = figure(p->html, "fig-windows");
    assert_non_null(table);
    assert_int_equal(count_of(table, "<tr"), 1 + TRACK_WINDOWS);
    assert_int_equal(count_of(table, "<tr class=\"failed\">"), 1);
    free(table);
}

/* One group per assessed window, carrying its times and margin, one mark
 * per failed window; keys of the legend use another class attribute and
 * are not counted. */
static void test_track_windows_marked(void **state)
{
    const track_page *p = *state;
    const char *fig = p->margin;
    assert_int_equal(count_of(fig, "<g class=\"window\""), TRACK_WINDOWS - 1);
    assert_int_equal(count_of(p->html, "class=\"window-failed\""), 1);
    assert_int_equal(count_of(fig, "class=\"window-failed\""), 1);
    size_t i = 0;
    double prev_cy = -1.0;
    for (const char *g = strstr(fig, "<g class=\"window\""); g;
         g = strstr(g + 1, "<g class=\"window\""), i++) {
        if (i == TRACK_FAILED)
            i++;
        const el_track_window *w = &p->r.windows[i];
        size_t len = 0;
        const char *from = attr(g, "data-from", &len);
        assert_non_null(from);
        assert_int_equal(len, strlen(w->from_text));
        assert_memory_equal(from, w->from_text, len);
        assert_non_null(attr(g, "data-to", &len));
        /* data-margin is printed with 6 significant digits: relative
         * rounding at most 5e-6. */
        assert_close(attr_number(g, "data-margin"), w->margin, 5e-6, 0.0);
        /* Margins fall window by window, so the dots go down the page
         * (larger y); pixel coordinates are exact to their 0.1 print. */
        double cy = attr_number(strstr(g, "<circle class=\"wdot\""), "cy");
        assert_true(cy > prev_cy);
        prev_cy = cy;
    }
    assert_int_equal(i, TRACK_WINDOWS);
    assert_int_equal(count_of(fig, "class=\"trend\""), 1);
    assert_int_equal(count_of(fig, "class=\"trend-bound\""), 2);
    assert_int_equal(count_of(fig, "class=\"extrapolation\""), 1);
    assert_int_equal(count_of(fig, "class=\"zero-interval\""), 1);
    assert_int_equal(count_of(fig, "class=\"boundary\""), 1);
    assert_int_equal(count_of(fig, "class=\"unstable-side\""), 1);
    /* Damping panel: a dot per window with a damping ratio (window 4 has
     * none), a frequency dot per assessed window. */
    char *dmp = figure(p->html, "fig-damping");
    assert_non_null(dmp);
    assert_int_equal(count_of(dmp, "<circle class=\"zeta\""), TRACK_WINDOWS - 2);
    assert_int_equal(count_of(dmp, "<circle class=\"freq\""), TRACK_WINDOWS - 1);
    assert_non_null(strstr(dmp, "1 window without a defined damping ratio"));
    free(dmp);
}

/* Time to zero 5000 after the last window, bounds 3000..9000: far beyond
 * the windows' span of 600. */
static void far_time_to_zero(el_track_result *r)
{
    r->time_to_zero = 5000.0;
    r->time_to_zero_lo = 3000.0;
}

static void no_time_to_zero(el_track_result *r)
{
    r->time_to_zero = r->time_to_zero_lo = r->time_to_zero_hi = NAN;
}

/* Extrapolation only when the margin is called shrinking; an upper time
 * to zero of +inf reads "not bounded" and the interval runs to the edge. */
static void test_track_extrapolation_only_when_shrinking(void **state)
{
    track_page *p = *state;
    /* Undecided, with a time to zero present and unbounded above. */
    page_variant(p, 0.5, EL_TREND_UNDECIDED, INFINITY, NULL);
    assert_non_null(strstr(p->html, "NO CLEAR TREND"));
    assert_null(strstr(p->html, "SHRINKING MARGIN"));
    assert_int_equal(count_of(p->margin, "class=\"trend\""), 1);
    assert_int_equal(count_of(p->html, "class=\"extrapolation\""), 0);
    assert_int_equal(count_of(p->html, "class=\"zero-interval\""), 0);
    assert_non_null(strstr(p->html, "not bounded]"));
    /* Shrinking and unbounded above: drawn, with the open end said. */
    page_variant(p, 0.5, EL_TREND_SHRINKING, INFINITY, NULL);
    assert_int_equal(count_of(p->margin, "class=\"extrapolation\""), 1);
    assert_int_equal(count_of(p->margin, "class=\"zero-interval\""), 1);
    assert_non_null(strstr(p->margin, "not bounded &rarr;"));
    assert_null(strstr(p->margin, "The view is cut"));
    /* Far off: the view stops at twice the span after the windows' end
     * and says so; the dashed line ends on the frame's right edge (pixels
     * printed to 0.1: 0.05 of rounding). */
    page_variant(p, 0.5, EL_TREND_SHRINKING, 9000.0, far_time_to_zero);
    assert_non_null(strstr(p->margin, "The view is cut at twice the windows' span"));
    const char *fr = strstr(p->margin, "<rect class=\"frame\"");
    double right = attr_number(fr, "x") + attr_number(fr, "width");
    assert_close(attr_number(strstr(p->margin, "<line class=\"extrapolation\""), "x2"), right,
                 0.0, 0.05 + 1e-9);
    /* Growing: green word, no extrapolation, no time to zero. */
    page_variant(p, 0.5, EL_TREND_GROWING, 90.0, no_time_to_zero);
    assert_non_null(strstr(p->html, "style=\"--v:var(--stable)\""));
    assert_non_null(strstr(p->html, "GROWING MARGIN"));
    assert_int_equal(count_of(p->html, "class=\"extrapolation\""), 0);
    assert_null(strstr(p->html, "time to zero margin"));
}

/* y of the zero line and of every bar end inside the plot frame: the
 * range holds 0 and every bound. */
static void assert_bounds_in_frame(const char *fig)
{
    const char *fr = strstr(fig, "<rect class=\"frame\"");
    double top = attr_number(fr, "y"), bottom = top + attr_number(fr, "height");
    double y0 = attr_number(strstr(fig, "<line class=\"boundary\""), "y1");
    assert_true(y0 >= top && y0 <= bottom);
    size_t bars = 0;
    for (const char *b = strstr(fig, "<line class=\"wbar\""); b;
         b = strstr(b + 1, "<line class=\"wbar\""), bars++) {
        double y1 = attr_number(b, "y1"), y2 = attr_number(b, "y2");
        if (!(y1 >= top && y1 <= bottom && y2 >= top && y2 <= bottom))
            fail_msg("bar %zu at y %.1f..%.1f outside the frame %.1f..%.1f", bars, y1, y2, top,
                     bottom);
    }
    assert_true(bars > 0);
}

/* With offset -0.1: every margin and bound below zero (-0.08 at the
 * most) and no line, so only the rule "0 is in the range" brings the
 * zero line in. */
static void all_below_zero(el_track_result *r)
{
    for (size_t i = 0; i < TRACK_WINDOWS; i++)
        r->windows[i].margin_hi = r->windows[i].margin + 0.02;
    drop_trend(r);
}

/* Bars of the first and last window wider than the lines reach (+0.4
 * above, -0.4 below): only the rule "every bound is in the range" keeps
 * them inside. */
static void wide_end_bars(el_track_result *r)
{
    r->windows[0].margin_hi = r->windows[0].margin + 0.4;
    r->windows[TRACK_WINDOWS - 1].margin_lo = r->windows[TRACK_WINDOWS - 1].margin - 0.4;
}

static void test_track_negative_margins(void **state)
{
    track_page *p = *state;
    assert_bounds_in_frame(p->margin);
    page_variant(p, -0.1, EL_TREND_UNDECIDED, 90.0, all_below_zero);
    assert_bounds_in_frame(p->margin);
    assert_int_equal(count_of(p->margin, "class=\"trend\""), 0);
    /* Shrinking, all negative, with the line: no time to zero, so no
     * extrapolation. */
    page_variant(p, -0.1, EL_TREND_SHRINKING, 90.0, wide_end_bars);
    assert_bounds_in_frame(p->margin);
    assert_int_equal(count_of(p->margin, "class=\"trend\""), 1);
    assert_int_equal(count_of(p->margin, "class=\"extrapolation\""), 0);
}

static void one_window(el_track_result *r)
{
    for (size_t i = 1; i < r->n_windows; i++)
        free(r->windows[i].margin_samples);
    r->n_windows = 1;
    r->n_ok = 1;
    drop_trend(r);
}

/* One window (a single time point), no trend: one mark, no lines, n/a. */
static void test_track_single_window(void **state)
{
    track_page *p = *state;
    page_variant(p, 0.5, EL_TREND_UNDECIDED, 90.0, one_window);
    assert_int_equal(count_of(p->html, "<g class=\"window\""), 1);
    assert_int_equal(count_of(p->html, "class=\"trend\""), 0);
    assert_int_equal(count_of(p->html, "class=\"trend-bound\""), 0);
    assert_non_null(strstr(p->html, "no trend fitted"));
    assert_non_null(strstr(p->html, "P(shrinking)</div><div class=\"tv\">n/a"));
}

static void iso_times(el_track_result *r)
{
    r->time_is_iso = 1;
    r->time_origin_s = 1796025600.0;
    snprintf(r->time_unit, sizeof r->time_unit, "s"); /* as el_track_run sets it */
    snprintf(r->windows[0].from_text, sizeof r->windows[0].from_text, "2026-11-30T08:00:00Z");
}

/* A number time column whose header gives its unit ("t [min]"). */
static void minute_times(el_track_result *r)
{
    snprintf(r->time_unit, sizeof r->time_unit, "min");
}

static void test_track_escaping_and_units(void **state)
{
    track_page *p = *state;
    assert_null(strstr(p->html, TRACK_ERROR));
    assert_int_equal(count_of(p->html, TRACK_ERROR_ESCAPED), 2);   /* table and hover text */
    assert_null(strstr(p->html, "fan <1>"));
    assert_non_null(strstr(p->html, "fan &lt;1&gt;.csv"));
    assert_null(strstr(p->html, "<b>warning</b>"));
    assert_non_null(strstr(p->html, "a &lt;b&gt;warning&lt;/b&gt; &amp; more"));
    assert_non_null(strstr(p->html, "per time unit"));
    assert_non_null(strstr(p->html, "time [time unit]"));
    /* ISO log: seconds from the first window's start, which the caption
     * names as written. */
    page_variant(p, 0.5, EL_TREND_SHRINKING, 90.0, iso_times);
    assert_non_null(strstr(p->html, "time from the first window's start [s]"));
    assert_non_null(strstr(p->margin, "Time in seconds from 2026-11-30T08:00:00Z."));
    assert_non_null(strstr(p->html, "1/s per s"));
    assert_non_null(strstr(p->html, "f [Hz]"));
    /* A unit from the time column's header is used as given. */
    page_variant(p, 0.5, EL_TREND_SHRINKING, 90.0, minute_times);
    assert_non_null(strstr(p->html, "1/min per min"));
    assert_non_null(strstr(p->html, "time [min]"));
    assert_non_null(strstr(p->html, "f [cycles/min]"));
}

static void test_track_deterministic(void **state)
{
    const track_page *p = *state;
    track_page again = {0};
    again.r = p->r;       /* read only: render does not change the result */
    render(&again);
    assert_string_equal(again.html, p->html);
    free(again.html);
    free(again.margin);
}

/* The figure of poles across model orders (el_html_stab.h): only for a
 * hankel model with poles; every pole with a finite frequency inside the
 * view is one circle of its kind, the others are counted in the caption;
 * a chain of persistent poles over several orders is one path through
 * them; the model's order is marked and its kept pole numbered as the
 * nearest reported mode (the fixture's mode 1 at 2 / 2 pi = 0.318 Hz).
 * Hand-made poles (order, frequency, persistent, in model, chain):
 *   1: 0 Hz spurious (0)
 *   2: 0.318 kept (1)
 *   3: 0.318 kept (1), 0.20 persistent (5), 40 Hz spurious (2)
 *   4: 0.319 kept (1), 0.20 persistent (5), Nyquist (3), 0.30 spurious (4)
 * The view's top is 1.5 x 0.319 (el_html_stab.h), so the 40 Hz pole is
 * above it. */
static void test_orders_figure(void **state)
{
    (void)state;
    fixture f;
    fixture_plane(&f);
    char *html = report(&f, &f.spectra);
    assert_null(strstr(html, "fig-orders"));   /* ls: no such figure */
    free(html);
    static const struct {
        size_t order;
        double hz;
        int physical, in_model;
        size_t chain;
    } P[] = {{1, 0.0, 0, 0, 0},    {2, 0.318, 1, 1, 1}, {3, 0.318, 1, 1, 1},
             {3, 0.20, 1, 0, 5},   {3, 40.0, 0, 0, 2},  {4, 0.319, 1, 1, 1},
             {4, 0.20, 1, 0, 5},   {4, NAN, 0, 0, 3},   {4, 0.30, 0, 0, 4}};
    size_t n = sizeof P / sizeof P[0];
    el_model *m = &f.r.model;
    m->method = EL_METHOD_HANKEL;
    m->subspace_order = 2;
    m->subspace_max_order = 4;
    m->subspace_n_poles = n;
    m->subspace_poles = keep(&f.mem, n * sizeof(el_model_pole));
    for (size_t k = 0; k < n; k++) {
        el_model_pole *q = &m->subspace_poles[k];
        q->order = P[k].order;
        q->frequency_hz = P[k].hz;
        q->natural_hz = P[k].hz;
        q->damping_ratio = k == 7 ? NAN : 0.05;
        q->contribution = 0.1;
        q->physical = P[k].physical;
        q->in_model = P[k].in_model;
        q->chain = P[k].chain;
        q->stable = k > 1;
    }
    html = report(&f, &f.spectra);
    char *fig = figure(html, "fig-orders");
    assert_non_null(fig);
    assert_int_equal(count_of(fig, "<circle class=\"pole "), 7);
    assert_int_equal(count_of(fig, "<circle class=\"pole in-model\""), 3);
    assert_int_equal(count_of(fig, "<circle class=\"pole persistent\""), 2);
    assert_int_equal(count_of(fig, "<circle class=\"pole spurious\""), 2);
    assert_int_equal(count_of(fig, "data-order=\"4\""), 3);
    assert_int_equal(count_of(fig, "<path class=\"chain in-model\" d=\""), 1);
    /* Chain 5 and the legend's key line. */
    assert_int_equal(count_of(fig, "<path class=\"chain\" d=\"M"), 2);
    const char *p = strstr(fig, "<path class=\"chain in-model\"");
    size_t len = 0;
    const char *d = attr(p, "d", &len);
    assert_non_null(d);
    assert_int_equal(moves_in(d, len), 1);
    assert_int_equal(pairs_in(d, len), 3);
    assert_non_null(strstr(fig, "class=\"chosen-order\""));
    assert_non_null(strstr(fig, "model order 2"));
    assert_non_null(strstr(fig, ">1</text>"));
    assert_non_null(strstr(fig, "1 pole above the view not drawn"));
    assert_non_null(strstr(fig, "1 pole at the Nyquist limit"));
    assert_non_null(strstr(fig, "9 poles, 5 persistent"));
    assert_null(strstr(fig, "nan"));
    assert_null(strstr(fig, "inf"));
    free(fig);
    free(html);
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
        cmocka_unit_test(test_orders_figure),
        cmocka_unit_test_setup_teardown(test_track_ordered, track_setup, track_teardown),
        cmocka_unit_test_setup_teardown(test_track_windows_marked, track_setup, track_teardown),
        cmocka_unit_test_setup_teardown(test_track_extrapolation_only_when_shrinking,
                                        track_setup, track_teardown),
        cmocka_unit_test_setup_teardown(test_track_negative_margins, track_setup,
                                        track_teardown),
        cmocka_unit_test_setup_teardown(test_track_single_window, track_setup, track_teardown),
        cmocka_unit_test_setup_teardown(test_track_escaping_and_units, track_setup,
                                        track_teardown),
        cmocka_unit_test_setup_teardown(test_track_deterministic, track_setup, track_teardown),
    };
    return cmocka_run_group_tests_name("el_html", tests, NULL, NULL);
}
