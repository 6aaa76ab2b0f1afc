/* cli_spectrum: `eigenlog spectrum FILE`: Welch power spectra and peaks. */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli.h"
#include "el_assess.h"
#include "el_html_spectrum.h"
#include "el_io.h"
#include "el_json.h"
#include "el_report.h"
#include "el_spectrum.h"

static const cli_option OPTIONS[] = {
    CLI_INPUT_OPTION_ROWS,
    {"channels", "A,B,..", "channels (default: every column but time)"},
    {"from", "T", "window start, in the log's own time unit, or ISO 8601"},
    {"to", "T", "window end, likewise"},
    {"max-gap", "N", "longest run of missing samples to fill (default 5)"},
    {"segment", "N", "samples per Welch segment (default: largest power of two <= n/4, >= 64)"},
    {"peaks", "N", "at most N peaks per channel (default 5)"},
    {"json", "FILE", "write spectra and peaks as JSON (- = standard output)"},
    {"csv", "FILE", "write the spectra as CSV, one column per channel (- = standard output)"},
    {"html", "FILE", "write a self-contained HTML page: PSD per channel with its peaks"},
    {"quiet", NULL, "print nothing but errors"},
};
#define N_OPTIONS (sizeof OPTIONS / sizeof OPTIONS[0])

static const char *val(const cli_args *a, const char *name)
{
    return a->value[cli_index(OPTIONS, N_OPTIONS, name)];
}

/* The layout line: segments, overlap, what the last segment did, so no
 * reader wonders whether the end of the log was dropped. */
static void print_layout(FILE *o, const el_assessment *r, const el_spectra *s)
{
    fprintf(o, "%s: Welch spectra,\n  %zu segment%s of %zu samples (Hann, 50%% overlap", r->table.source,
           s->n_segments, s->n_segments == 1 ? "" : "s", s->segment_length);
    if (s->n_segments > 1 && s->last_start != (s->n_segments - 1) * s->hop)
        fprintf(o, "; the last moved back to end\n  at the last sample, %.0f%% overlap",
               100.0 * s->last_overlap);
    fprintf(o, "): all %zu samples used;\n  resolution %.4g Hz, %.3g degrees of freedom per bin\n\n",
           s->n_samples, s->df_hz, s->dof);
}

static void print_table(FILE *o, const el_assessment *r, const el_spectra *s, const el_peaks *p)
{
    print_layout(o, r, s);
    for (size_t c = 0; c < s->n_channels; c++) {
        const char *unit = r->series.units[c];
        char power_unit[80], psd_unit[80];
        el_spectrum_unit(unit, 0, power_unit, sizeof power_unit);
        el_spectrum_unit(unit, 1, psd_unit, sizeof psd_unit);
        fprintf(o, "%s%s%s%s: total power %.4g%s%s\n", r->series.names[c], unit[0] ? " [" : "",
               unit, unit[0] ? "]" : "", s->total_power[c], power_unit[0] ? " " : "",
               power_unit);
        if (p->count[c] == 0) {
            fprintf(o, "  no peak stands out (%.0fx the median level and above the estimator noise)\n\n",
                   10.0);
            continue;
        }
        fprintf(o, "  %-16s %-17s %11s %9s\n", "peak Hz", "half-power band", "PSD", "x median");
        for (size_t i = 0; i < p->count[c]; i++) {
            const el_peak *pk = &p->items[c * p->max_per_channel + i];
            char freq[40], band[40];
            snprintf(freq, sizeof freq, "%.4g +- %.2g", pk->frequency_hz, 0.5 * pk->resolution_hz);
            if (pk->band_ok)
                snprintf(band, sizeof band, "%.4g-%.4g", pk->band_low_hz, pk->band_high_hz);
            else
                snprintf(band, sizeof band, "n/a");
            fprintf(o, "  %-16s %-17s %11.4g %9.3g\n", freq, band, pk->height, pk->ratio_to_median);
        }
        fprintf(o, "  (PSD in %s)\n\n", psd_unit);
    }
    fprintf(o, "A peak's frequency is the centre of its half-power band on the smoothed\n"
           "spectrum (n/a: not resolved from a taller peak; then the tallest bin's),\n"
           "+- half a bin, the resolution.\n");
}

/* The envelope's `input` (docs/json.md): the keys `file` and
 * `time_unit` also stay at the top level, where they were first. */
static void spectra_json_input(el_json *j, const el_assessment *r, const el_assess_options *o)
{
    const el_series *se = &r->series;
    el_json_object_begin(j, "input");
    el_json_string(j, "file", r->table.source);
    el_envelope_input(j, o->path, o->paths, o->n_paths, se->names, se->n_channels);
    el_json_array_begin(j, "channels");
    for (size_t c = 0; c < se->n_channels; c++)
        el_json_string(j, NULL, se->names[c]);
    el_json_array_end(j);
    el_json_array_begin(j, "units");
    for (size_t c = 0; c < se->n_channels; c++)
        el_json_string(j, NULL, se->units[c]);
    el_json_array_end(j);
    el_json_string(j, "time_unit", r->table.time_is_iso ? "s" : r->table.time_unit);
    el_json_string(j, "time_unit_source", r->table.time_unit_source);
    el_json_number(j, "dt", se->dt);
    el_json_int(j, "samples", (long long)se->n_samples);
    el_json_object_end(j);
}

static el_status spectra_json(const el_assessment *r, const el_assess_options *o,
                              const el_spectra *s, const el_peaks *p, el_buf *out)
{
    el_json j;
    el_json_init(&j, out);
    el_json_object_begin(&j, NULL);
    el_json_string(&j, "eigenlog", EL_VERSION);
    el_envelope_head(&j, "spectrum");
    spectra_json_input(&j, r, o);
    const el_warnings *lists[2] = {&r->input_warnings, &r->warnings};
    el_envelope_warnings(&j, "warning_details", lists, 2);
    el_json_string(&j, "file", r->table.source);
    el_json_number(&j, "dt", s->dt);
    /* dt is in s and frequencies in Hz whatever the log's unit; the unit
     * the log was written in, how it was found, and ingest's notes. */
    el_json_string(&j, "time_unit", r->table.time_is_iso ? "s" : r->table.time_unit);
    el_json_string(&j, "time_unit_source", r->table.time_unit_source);
    el_json_array_begin(&j, "warnings");
    for (size_t i = 0; i < r->input_warnings.count; i++)
        el_json_string(&j, NULL, r->input_warnings.items[i]);
    for (size_t i = 0; i < r->warnings.count; i++)
        el_json_string(&j, NULL, r->warnings.items[i]);
    el_json_array_end(&j);
    el_json_int(&j, "segment_length", (long long)s->segment_length);
    el_json_int(&j, "segments", (long long)s->n_segments);
    el_json_int(&j, "samples", (long long)s->n_samples);
    el_json_int(&j, "samples_unused", 0);
    el_json_int(&j, "last_segment_start", (long long)s->last_start);
    el_json_number(&j, "last_segment_overlap", s->last_overlap);
    el_json_number(&j, "df_hz", s->df_hz);
    el_json_number(&j, "dof", s->dof);
    el_json_array_begin(&j, "frequency_hz");
    for (size_t k = 0; k < s->n_bins; k++)
        el_json_number(&j, NULL, s->frequency_hz[k]);
    el_json_array_end(&j);
    el_json_array_begin(&j, "channels");
    for (size_t c = 0; c < s->n_channels; c++) {
        char power_unit[80], psd_unit[80];
        el_spectrum_unit(r->series.units[c], 0, power_unit, sizeof power_unit);
        el_spectrum_unit(r->series.units[c], 1, psd_unit, sizeof psd_unit);
        el_json_object_begin(&j, NULL);
        el_json_string(&j, "name", r->series.names[c]);
        el_json_string(&j, "unit", r->series.units[c]);
        el_json_string(&j, "power_unit", power_unit);
        el_json_string(&j, "psd_unit", psd_unit);
        el_json_number(&j, "total_power", s->total_power[c]);
        el_json_array_begin(&j, "psd");
        for (size_t k = 0; k < s->n_bins; k++)
            el_json_number(&j, NULL, s->psd[c * s->n_bins + k]);
        el_json_array_end(&j);
        el_json_array_begin(&j, "peaks");
        for (size_t i = 0; i < p->count[c]; i++) {
            const el_peak *pk = &p->items[c * p->max_per_channel + i];
            el_json_object_begin(&j, NULL);
            el_json_number(&j, "frequency_hz", pk->frequency_hz);
            el_json_number(&j, "height", pk->height);
            el_json_number(&j, "ratio_to_median", pk->ratio_to_median);
            el_json_number(&j, "prominence", pk->prominence);
            if (pk->width_ok)
                el_json_number(&j, "width_hz", pk->width_hz);
            else
                el_json_null(&j, "width_hz");
            el_json_number(&j, "resolution_hz", pk->resolution_hz);
            if (pk->band_ok) {
                el_json_array_begin(&j, "half_power_band_hz");
                el_json_number(&j, NULL, pk->band_low_hz);
                el_json_number(&j, NULL, pk->band_high_hz);
                el_json_array_end(&j);
            } else {
                el_json_null(&j, "half_power_band_hz");
            }
            el_json_number(&j, "smoothed_height", pk->smoothed_height);
            el_json_object_end(&j);
        }
        el_json_array_end(&j);
        el_json_object_end(&j);
    }
    el_json_array_end(&j);
    el_json_object_end(&j);
    return el_json_finish(&j);
}

/* The text report and the warnings, wrapped to the terminal (cli_print_text). */
static void print_wrapped(const el_assessment *r, const el_spectra *s, const el_peaks *p)
{
    char *text = NULL;
    size_t size = 0;
    FILE *mem = open_memstream(&text, &size);
    FILE *o = mem != NULL ? mem : stdout;
    print_table(o, r, s, p);
    for (size_t i = 0; i < r->input_warnings.count; i++)
        fprintf(o, "! %s\n", r->input_warnings.items[i]);
    for (size_t i = 0; i < r->warnings.count; i++)
        fprintf(o, "! %s\n", r->warnings.items[i]);
    if (mem != NULL && fclose(mem) == 0 && text != NULL)
        cli_print_text(text);
    free(text);
}

static el_status spectra_csv(const el_assessment *r, const el_spectra *s, el_buf *out)
{
    el_buf_printf(out, "frequency_hz");
    for (size_t c = 0; c < s->n_channels; c++) {
        char psd_unit[80];
        el_spectrum_unit(r->series.units[c], 1, psd_unit, sizeof psd_unit);
        el_buf_printf(out, ",\"%s [%s]\"", r->series.names[c], psd_unit);
    }
    el_buf_printf(out, "\n");
    for (size_t k = 0; k < s->n_bins; k++) {
        el_buf_printf(out, "%.10g", s->frequency_hz[k]);
        for (size_t c = 0; c < s->n_channels; c++)
            el_buf_printf(out, ",%.10g", s->psd[c * s->n_bins + k]);
        el_buf_printf(out, "\n");
    }
    return out->failed ? EL_ERR_NOMEM : EL_OK;
}

static el_status parse(const cli_args *a, el_assess_options *o,
                       el_spectrum_options *so, el_error *err)
{
    el_assess_defaults(o);
    el_spectrum_defaults(so);
    el_status st = cli_log_files(a, "eigenlog spectrum FILE... [options]", o, err);
    if (st == EL_OK)
        st = cli_input_options(a, OPTIONS, N_OPTIONS, &o->time_unit, &o->decimal,
                               &o->date_order, err);
    if (st != EL_OK)
        return st;
    o->time_column = val(a, "time");
    o->channels = val(a, "channels");
    o->from_text = val(a, "from");
    o->to_text = val(a, "to");
    const char *v;
    if ((v = val(a, "max-gap")) && (st = cli_size("max-gap", v, 0, 1000000, &o->max_gap, err)))
        return st;
    if ((v = val(a, "segment")) && (st = cli_size("segment", v, 1, (size_t)1 << 30, &so->segment_length, err)))
        return st;
    if ((v = val(a, "peaks")) && (st = cli_size("peaks", v, 1, 100, &so->max_peaks, err)))
        return st;
    const cli_output_path outs[3] = {
        {"json", val(a, "json")}, {"csv", val(a, "csv")}, {"html", val(a, "html")}};
    return cli_check_output_paths(o->paths, o->n_paths, outs, 3, err);
}

static el_status run(const cli_args *a, el_error *err)
{
    el_assess_options o;
    el_spectrum_options so;
    el_status st = parse(a, &o, &so, err);
    if (st != EL_OK)
        return st;
    el_assessment r;
    memset(&r, 0, sizeof r);
    el_spectra s;
    el_peaks p;
    memset(&s, 0, sizeof s);
    memset(&p, 0, sizeof p);
    const char *json = val(a, "json"), *csv = val(a, "csv"), *html = val(a, "html");
    int any_stdout = cli_is_stdout(json) || cli_is_stdout(csv) || cli_is_stdout(html);
    cli_progress *progress =
        cli_progress_start(cli_progress_wanted(val(a, "quiet") != NULL) && !any_stdout);
    o.stage_progress = progress ? cli_progress_stage : NULL;
    o.stage_ctx = progress;
    st = el_assess_load(&o, &r, err);
    cli_progress_stage(progress, "computing spectra", 0, 1);
    if (st == EL_OK)
        st = el_spectrum_compute(&r.series, &so, &s, &p, &r.warnings, err);
    cli_progress_stage(progress, "computing spectra", 1, 1);
    cli_progress_stop(progress);
    /* All built before any is written: a failure leaves no file. */
    cli_output out[3] = {{json, {0}}, {csv, {0}}, {html, {0}}};
    el_status built = EL_OK;
    if (st == EL_OK && json != NULL)
        built = spectra_json(&r, &o, &s, &p, &out[0].text);
    if (st == EL_OK && built == EL_OK && csv != NULL)
        built = spectra_csv(&r, &s, &out[1].text);
    if (st == EL_OK && built != EL_OK)
        st = el_error_set(err, built, "could not build the output");
    if (st == EL_OK && html != NULL)
        st = el_html_spectrum_report(&r, &s, &p, &out[2].text, err);
    st = cli_write_outputs(out, 3, st, err);
    if (st == EL_OK && val(a, "quiet") == NULL && !any_stdout) {
        print_wrapped(&r, &s, &p);
    }
    el_spectra_free(&s);
    el_peaks_free(&p);
    el_assessment_free(&r);
    return st;
}

int cli_spectrum(int argc, char **argv)
{
    cli_args a;
    el_error err;
    el_error_clear(&err);
    el_status st = cli_parse(argc, argv, OPTIONS, N_OPTIONS, &a, &err);
    if (st == EL_OK && a.help) {
        cli_print_help("eigenlog spectrum FILE... [options]",
                       "Welch power spectral density of each channel (Hann window, 50% overlap,\n"
                       "segments averaged; density scaled so it integrates to the variance)\n"
                       "and its peaks: frequency, height, width at half height.",
                       OPTIONS, N_OPTIONS);
        return 0;
    }
    if (st == EL_OK)
        st = run(&a, &err);
    if (st != EL_OK)
        cli_print_error(&err);
    return el_exit_code(st);
}
