/* test_follow: the ring of rows, the incremental reader (growth, a cut
 * line, truncation, rotation, a stream), the follower against the offline
 * track on the same rows, bad rows, and the alarm's hysteresis. */
#include "el_test.h"

#include <fcntl.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "el_follow.h"
#include "el_rng.h"

/* ------------------------------------------------------------------ */
/* Ring. */

/* Rows pushed and dropped across the wrap and through two growths come
 * back in order with their values (row k holds k, -k). */
static void test_ring_order(void **state)
{
    (void)state;
    el_follow_ring r;
    el_error err;
    assert_int_equal(el_follow_ring_init(&r, 2, 4, &err), EL_OK);
    long next = 0, oldest = 0;
    for (int round = 0; round < 50; round++) {
        int push = 1 + round % 7, drop = round % 5;
        for (int i = 0; i < push; i++, next++) {
            double v[2] = {(double)next, -(double)next};
            assert_int_equal(el_follow_ring_push(&r, 0.5 * (double)next, v, next + 10, &err),
                             EL_OK);
        }
        el_follow_ring_drop(&r, (size_t)drop);
        oldest += drop < next - oldest ? drop : next - oldest;
        assert_int_equal(r.count, (size_t)(next - oldest));
        for (size_t i = 0; i < r.count; i++) {
            long k = oldest + (long)i;
            assert_true(el_follow_ring_time(&r, i) == 0.5 * (double)k);
            assert_true(el_follow_ring_row(&r, i)[0] == (double)k);
            assert_true(el_follow_ring_row(&r, i)[1] == -(double)k);
            assert_int_equal(el_follow_ring_line(&r, i), k + 10);
        }
    }
    /* Grows only to what is held at once (at most 6 + 4 * 50 / 5 net rows
     * here), never to everything pushed. */
    assert_true(r.capacity < (size_t)next);
    el_follow_ring_drop(&r, 1000);
    assert_int_equal(r.count, 0);
    el_follow_ring_free(&r);
}

/* ------------------------------------------------------------------ */
/* Reader. */

static void put_text(const char *path, const char *text, const char *mode)
{
    FILE *f = fopen(path, mode);
    assert_non_null(f);
    fputs(text, f);
    fclose(f);
}

static el_follow_event poll_once(el_follow_reader *rd, const char **lines, size_t *n,
                                 long *first)
{
    el_follow_event ev;
    size_t len;
    el_error err;
    assert_int_equal(el_follow_reader_poll(rd, 0, &ev, lines, &len, n, first, &err), EL_OK);
    return ev;
}

/* A cut last line waits for its LF; truncation and rotation are seen
 * and the new file is read from its first line. */
static void test_reader_file(void **state)
{
    (void)state;
    char dir[] = "/tmp/el_follow_XXXXXX";
    assert_non_null(mkdtemp(dir));
    char path[256], moved[256];
    snprintf(path, sizeof path, "%s/log.csv", dir);
    snprintf(moved, sizeof moved, "%s/log.1.csv", dir);
    put_text(path, "t,x\n0,1\n1,2\n2,", "w");
    el_follow_reader rd;
    el_error err;
    assert_int_equal(el_follow_reader_open(&rd, path, &err), EL_OK);
    const char *lines;
    size_t n;
    long first;
    assert_int_equal(poll_once(&rd, &lines, &n, &first), EL_FOLLOW_LINES);
    assert_int_equal(n, 3);
    assert_int_equal(first, 1);
    assert_string_equal(lines, "t,x\n0,1\n1,2\n");
    assert_int_equal(poll_once(&rd, &lines, &n, &first), EL_FOLLOW_NOTHING);
    put_text(path, "3\r\n3,4\n", "a");
    assert_int_equal(poll_once(&rd, &lines, &n, &first), EL_FOLLOW_LINES);
    assert_int_equal(first, 4);
    assert_string_equal(lines, "2,3\n3,4\n");
    /* Truncated in place: read again from the start. */
    put_text(path, "t,x\n", "w");
    assert_int_equal(poll_once(&rd, &lines, &n, &first), EL_FOLLOW_TRUNCATED);
    assert_int_equal(poll_once(&rd, &lines, &n, &first), EL_FOLLOW_LINES);
    assert_int_equal(first, 1);
    assert_string_equal(lines, "t,x\n");
    /* Rotated: moved away, a new file under the name. */
    assert_int_equal(rename(path, moved), 0);
    assert_int_equal(poll_once(&rd, &lines, &n, &first), EL_FOLLOW_NOTHING);
    put_text(path, "t,x\n9,9\n", "w");
    assert_int_equal(poll_once(&rd, &lines, &n, &first), EL_FOLLOW_ROTATED);
    assert_int_equal(poll_once(&rd, &lines, &n, &first), EL_FOLLOW_LINES);
    assert_int_equal(first, 1);
    assert_string_equal(lines, "t,x\n9,9\n");
    el_follow_reader_close(&rd);
    unlink(path);
    unlink(moved);
    rmdir(dir);
}

/* A stream's last line counts without its LF, then the stream ends. */
static void test_reader_stream(void **state)
{
    (void)state;
    int fds[2];
    assert_int_equal(pipe(fds), 0);
    assert_int_equal(write(fds[1], "t,x\n0,1\n1,2", 11), 11);
    close(fds[1]);
    int saved = dup(STDIN_FILENO);
    dup2(fds[0], STDIN_FILENO);
    close(fds[0]);
    el_follow_reader rd;
    el_error err;
    assert_int_equal(el_follow_reader_open(&rd, "-", &err), EL_OK);
    assert_true(rd.is_stream);
    const char *lines;
    size_t n, total = 0;
    long first;
    el_follow_event ev;
    while ((ev = poll_once(&rd, &lines, &n, &first)) != EL_FOLLOW_END)
        total += ev == EL_FOLLOW_LINES ? n : 0;
    assert_int_equal(total, 3);
    el_follow_reader_close(&rd);
    /* A file redirected to standard input is read to its end too, not
     * polled for growth (`track - --follow <log.csv` ends). */
    char path[] = "/tmp/el_follow_stdin_XXXXXX";
    int fd = mkstemp(path);
    assert_true(fd >= 0);
    assert_int_equal(write(fd, "t,x\n0,1\n", 8), 8);
    lseek(fd, 0, SEEK_SET);
    dup2(fd, STDIN_FILENO);
    close(fd);
    assert_int_equal(el_follow_reader_open(&rd, "-", &err), EL_OK);
    assert_true(rd.is_stream);
    total = 0;
    while ((ev = poll_once(&rd, &lines, &n, &first)) != EL_FOLLOW_END)
        total += ev == EL_FOLLOW_LINES ? n : 0;
    assert_int_equal(total, 2);
    el_follow_reader_close(&rd);
    unlink(path);
    dup2(saved, STDIN_FILENO);
    close(saved);
}

/* ------------------------------------------------------------------ */
/* Follower against the offline track. */

/* A lightly damped oscillator (0.5 Hz, decay 0.2/s) driven by white
 * noise, sampled at 20 Hz: rows of text "t,x,v". */
static char *simulated_log(size_t rows)
{
    el_buf b = {0};
    el_buf_printf(&b, "time [s],x [m],v [m/s]\n");
    el_rng rng;
    el_rng_seed(&rng, 7, 0);
    double dt = 0.05, w = 2.0 * 3.141592653589793 * 0.5, s = 0.2, x = 0.0, v = 0.0;
    for (size_t k = 0; k < rows; k++) {
        el_buf_printf(&b, "%.2f,%.6f,%.6f\n", (double)k * dt, x, v);
        double a = -w * w * x - 2.0 * s * v;
        v += dt * a + 0.3 * sqrt(dt) * el_rng_normal(&rng);
        x += dt * v;
    }
    return b.data;
}

/* Feeds text to the follower in pieces of varied size (as reads bring
 * them) and collects the windows' margins. */
static size_t follow_text(el_follow *f, const char *text, double *margin, double *lo,
                          size_t max_windows, size_t *max_held)
{
    el_error err;
    size_t n_w = 0, len = strlen(text);
    const char *s = text;
    long line = 1;
    size_t piece = 1;
    *max_held = 0;
    while (s < text + len) {
        /* 1, 2, 3, ... 40 lines, then again. */
        const char *e = s;
        size_t n = 0;
        while (n < piece && e < text + len) {
            e = strchr(e, '\n') + 1;
            n++;
        }
        assert_int_equal(el_follow_add_lines(f, s, (size_t)(e - s), n, line, &err), EL_OK);
        line += (long)n;
        s = e;
        piece = piece % 40 + 1;
        for (;;) {
            const el_track_window *w = NULL;
            size_t index = 0;
            assert_int_equal(el_follow_next(f, s >= text + len, &w, &index, &err), EL_OK);
            if (w == NULL)
                break;
            assert_int_equal(index, n_w);
            assert_true(n_w < max_windows);
            margin[n_w] = w->margin;
            lo[n_w] = w->margin_lo;
            n_w++;
        }
        if (el_follow_rows_held(f) > *max_held)
            *max_held = el_follow_rows_held(f);
    }
    return n_w;
}

/* Each window's margin and bound equal the offline track's on the same
 * rows. Tolerance 1e-9 relative: offline refines the interval over the
 * whole log, follow over each window; the written times (2 decimals) make
 * the two differ by rounding only (~1e-15 relative), and every figure is
 * a smooth function of the interval (the bootstrap's draws depend on the
 * seed and the sample count, not on the interval). */
static void test_follow_equals_offline(void **state)
{
    (void)state;
    char *text = simulated_log(6000); /* 300 s: 6 windows of 50 s */
    el_track_options opt;
    el_track_defaults(&opt);
    opt.window = 50.0;
    opt.assess.boot.replicates = 200;
    opt.assess.boot.threads = 1;
    FILE *mem = fmemopen(text, strlen(text), "r");
    assert_non_null(mem);
    opt.assess.path = "sim.csv";
    opt.assess.stream = mem;
    el_track_result off;
    memset(&off, 0, sizeof off);
    el_error err;
    assert_int_equal(el_track_run(&opt, &off, &err), EL_OK);
    fclose(mem);
    opt.assess.stream = NULL;
    el_follow_options fo;
    el_follow_defaults(&fo);
    fo.track = opt;
    el_follow *f = NULL;
    assert_int_equal(el_follow_create(&fo, &f, &err), EL_OK);
    el_follow_new_file(f, "sim.csv");
    double margin[16], lo[16];
    size_t held = 0;
    size_t n = follow_text(f, text, margin, lo, 16, &held);
    assert_int_equal(n, off.n_windows);
    for (size_t i = 0; i < n; i++) {
        assert_close(margin[i], off.windows[i].margin, 1e-9, 0.0);
        assert_close(lo[i], off.windows[i].margin_lo, 1e-9, 0.0);
    }
    /* The trend over the same windows is the offline trend. */
    const el_track_result *r = el_follow_result(f);
    assert_int_equal(r->has_trend, 1);
    assert_close(r->slope, off.slope, 1e-9, 0.0);
    assert_close(r->p_shrinking, off.p_shrinking, 0.0, 1e-12);
    /* Bounded memory: a window (1000 rows) plus one piece (40), not 6000. */
    assert_true(held <= 1000 + 40 + 1);
    el_follow_destroy(f);
    el_track_free(&off);
    free(text);
}

/* A malformed row: stop names its line; skip leaves it out with a note
 * naming the line and carries on. */
static void test_bad_rows(void **state)
{
    (void)state;
    const char *text = "t,x,v\n0,1,2\n1,2,3\n2,oops,4\n3,4,5\n# comment\n4,5\n5,6,7\n";
    el_follow_options fo;
    el_follow_defaults(&fo);
    fo.track.window = 100.0;
    el_error err;
    el_follow *f = NULL;
    assert_int_equal(el_follow_create(&fo, &f, &err), EL_OK);
    el_follow_new_file(f, "bad.csv");
    assert_int_equal(el_follow_add_lines(f, text, strlen(text), 8, 1, &err), EL_ERR_DATA);
    assert_int_equal(err.line, 4);
    assert_string_equal(err.file, "bad.csv");
    el_follow_destroy(f);
    fo.skip_bad_rows = 1;
    assert_int_equal(el_follow_create(&fo, &f, &err), EL_OK);
    el_follow_new_file(f, "bad.csv");
    assert_int_equal(el_follow_add_lines(f, text, strlen(text), 8, 1, &err), EL_OK);
    el_warnings *notes = el_follow_notes(f);
    assert_int_equal(notes->count, 2);
    assert_non_null(strstr(notes->items[0], "bad.csv:4:"));
    assert_non_null(strstr(notes->items[1], "bad.csv:7:"));
    assert_int_equal(el_follow_rows_held(f), 4); /* t = 0, 1, 3, 5 */
    /* Time going back is a bad row too. */
    const char *back = "4.5,1,1\n6,1,1\n";
    assert_int_equal(el_follow_add_lines(f, back, strlen(back), 2, 9, &err), EL_OK);
    assert_int_equal(notes->count, 3);
    assert_non_null(strstr(notes->items[2], "bad.csv:9:"));
    el_follow_destroy(f);
}

/* A window length is required, --from/--to refused, the bootstrap on. */
static void test_create_refuses(void **state)
{
    (void)state;
    el_follow_options fo;
    el_follow_defaults(&fo);
    el_error err;
    el_follow *f = NULL;
    assert_int_equal(el_follow_create(&fo, &f, &err), EL_ERR_USAGE);
    assert_string_equal(err.option, "--window");
    fo.track.window = 10.0;
    fo.track.assess.from_text = "3";
    assert_int_equal(el_follow_create(&fo, &f, &err), EL_ERR_USAGE);
    assert_string_equal(err.option, "--from");
    fo.track.assess.from_text = NULL;
    /* 1..99 replicates are too few for bounds (--boot 0 turns them off). */
    fo.track.assess.boot.replicates = 50;
    assert_int_equal(el_follow_create(&fo, &f, &err), EL_ERR_USAGE);
    assert_string_equal(err.option, "--boot");
    assert_null(f);
}

/* ------------------------------------------------------------------ */
/* Alarms. */

/* K = 2: one alarming window alone never starts an episode, two in a row
 * do; one clear window inside an episode does not end it, two do. */
static void test_alarm_hysteresis(void **state)
{
    (void)state;
    el_follow_alarm a;
    memset(&a, 0, sizeof a);
    a.after = 2;
    const unsigned hits[] = {0, 1, 0, 1, 1, 0, 1, 0, 0, 1, 0};
    const int want[] = {0, 0, 0, 0, 1, 0, 0, 0, -1, 0, 0};
    for (size_t i = 0; i < sizeof hits / sizeof hits[0]; i++)
        assert_int_equal(el_follow_alarm_update(&a, hits[i]), want[i]);
    assert_int_equal(a.episodes, 1);
    /* K = 1: every change flips at once. */
    memset(&a, 0, sizeof a);
    a.after = 1;
    assert_int_equal(el_follow_alarm_update(&a, 1), 1);
    assert_int_equal(el_follow_alarm_update(&a, 0), -1);
}

static void test_alarm_conditions(void **state)
{
    (void)state;
    el_follow_alarm a;
    memset(&a, 0, sizeof a);
    el_error err;
    assert_int_equal(el_follow_alarm_parse(&a, "unstable,margin-below=0.05", &err), EL_OK);
    assert_int_equal(a.conditions, EL_ALARM_UNSTABLE | EL_ALARM_MARGIN_BELOW);
    assert_true(a.margin_below == 0.05);
    assert_int_equal(el_follow_alarm_parse(&a, "shrinking,bogus", &err), EL_ERR_USAGE);
    assert_string_equal(err.option, "--alarm");
    assert_int_equal(el_follow_alarm_parse(&a, "margin-below=x", &err), EL_ERR_USAGE);
    el_track_window w;
    memset(&w, 0, sizeof w);
    w.ok = 1;
    w.stability = EL_STABLE;
    w.margin = 0.04;
    assert_int_equal(el_follow_alarm_test(&a, &w, NULL), EL_ALARM_MARGIN_BELOW);
    w.margin = 0.06;
    assert_int_equal(el_follow_alarm_test(&a, &w, NULL), 0u);
    w.stability = EL_UNSTABLE;
    w.margin = -0.1;
    assert_int_equal(el_follow_alarm_test(&a, &w, NULL),
                     EL_ALARM_UNSTABLE | EL_ALARM_MARGIN_BELOW);
    char names[64];
    assert_string_equal(el_follow_alarm_names(EL_ALARM_UNSTABLE | EL_ALARM_MARGIN_BELOW,
                                              names, sizeof names),
                        "unstable,margin-below");
}

/* A JSON Lines record: one line, strings (with their spaces) intact, and
 * still JSON a reader parses back to the same values (checked here on the
 * characters: no raw newline, the text of the string unchanged). */
static void test_json_line(void **state)
{
    (void)state;
    el_buf b = {0};
    el_json j;
    el_json_init(&j, &b);
    el_json_object_begin(&j, NULL);
    el_json_string(&j, "a", "two  spaces\nand a newline");
    el_json_array_begin(&j, "b");
    el_json_number(&j, NULL, 1.5);
    el_json_array_end(&j);
    el_json_object_end(&j);
    assert_int_equal(el_json_finish(&j), EL_OK);
    el_follow_json_line(&b);
    assert_string_equal(b.data, "{\"a\": \"two  spaces\\nand a newline\",\"b\": [1.5]}\n");
    el_buf_free(&b);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_ring_order),
        cmocka_unit_test(test_reader_file),
        cmocka_unit_test(test_reader_stream),
        cmocka_unit_test(test_follow_equals_offline),
        cmocka_unit_test(test_bad_rows),
        cmocka_unit_test(test_create_refuses),
        cmocka_unit_test(test_alarm_hysteresis),
        cmocka_unit_test(test_alarm_conditions),
        cmocka_unit_test(test_json_line),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
