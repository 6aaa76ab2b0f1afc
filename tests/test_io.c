/* test_io: whole-or-nothing output (el_write_files), writing through
 * symbolic links and to devices, path identities and folder creation. The
 * reference is the POSIX file system itself: what is on disk afterwards. */
#include "el_test.h"

#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include "el_io.h"

typedef struct {
    char dir[256];
} fixture;

static int setup(void **state)
{
    fixture *f = calloc(1, sizeof *f);
    if (f == NULL)
        return -1;
    snprintf(f->dir, sizeof f->dir, "/tmp/el_test_io.XXXXXX");
    if (mkdtemp(f->dir) == NULL) {
        free(f);
        return -1;
    }
    *state = f;
    return 0;
}

static int teardown(void **state)
{
    fixture *f = *state;
    char cmd[512];
    snprintf(cmd, sizeof cmd, "rm -rf '%s'", f->dir);
    int rc = system(cmd);
    free(f);
    return rc == 0 ? 0 : -1;
}

static void path_in(const fixture *f, const char *name, char *out, size_t size)
{
    snprintf(out, size, "%s/%s", f->dir, name);
}

/* The whole content of path, or "" with *exists = 0. */
static void read_text(const char *path, char *out, size_t size, int *exists)
{
    FILE *in = fopen(path, "rb");
    *exists = in != NULL;
    out[0] = '\0';
    if (in == NULL)
        return;
    size_t got = fread(out, 1, size - 1, in);
    out[got] = '\0';
    fclose(in);
}

/* Number of entries in the folder besides . and .. */
static int entries(const char *dir)
{
    char cmd[512];
    snprintf(cmd, sizeof cmd, "ls -A '%s' | wc -l", dir);
    FILE *p = popen(cmd, "r");
    int n = -1;
    if (p != NULL) {
        if (fscanf(p, "%d", &n) != 1)
            n = -1;
        pclose(p);
    }
    return n;
}

static void test_two_files_written_whole(void **state)
{
    fixture *f = *state;
    char a[512], b[512], text[64];
    int exists;
    path_in(f, "a.json", a, sizeof a);
    path_in(f, "b.html", b, sizeof b);
    el_out_file files[3] = {{a, "alpha", 5}, {NULL, NULL, 0}, {b, "beta", 4}};
    el_error err;
    el_error_clear(&err);
    assert_int_equal(el_write_files(files, 3, &err), EL_OK);
    read_text(a, text, sizeof text, &exists);
    assert_string_equal(text, "alpha");
    read_text(b, text, sizeof text, &exists);
    assert_string_equal(text, "beta");
    assert_int_equal(entries(f->dir), 2);   /* no temporary file left */
}

static void test_failure_of_one_leaves_none(void **state)
{
    fixture *f = *state;
    char a[512], bad[512], text[64];
    int exists;
    path_in(f, "a.json", a, sizeof a);
    path_in(f, "missing/b.html", bad, sizeof bad);
    el_out_file files[2] = {{a, "alpha", 5}, {bad, "beta", 4}};
    el_error err;
    el_error_clear(&err);
    assert_int_equal(el_write_files(files, 2, &err), EL_ERR_IO);
    assert_string_equal(err.file, bad);
    assert_true(err.hint[0] != '\0');
    read_text(a, text, sizeof text, &exists);
    assert_false(exists);                    /* the good one was not written */
    assert_int_equal(entries(f->dir), 0);    /* nor its temporary file */

    /* An existing file keeps its old content when the other output fails. */
    FILE *old = fopen(a, "w");
    assert_non_null(old);
    fputs("old", old);
    fclose(old);
    el_error_clear(&err);
    assert_int_equal(el_write_files(files, 2, &err), EL_ERR_IO);
    read_text(a, text, sizeof text, &exists);
    assert_string_equal(text, "old");
    assert_int_equal(entries(f->dir), 1);
}

static void test_symlink_target_updated_link_kept(void **state)
{
    fixture *f = *state;
    char target[512], link[512], text[64];
    int exists;
    path_in(f, "target.txt", target, sizeof target);
    path_in(f, "link.txt", link, sizeof link);
    FILE *t = fopen(target, "w");
    assert_non_null(t);
    fputs("old", t);
    fclose(t);
    assert_int_equal(chmod(target, 0640), 0);
    assert_int_equal(symlink("target.txt", link), 0);   /* relative link */
    el_error err;
    el_error_clear(&err);
    assert_int_equal(el_write_file_atomic(link, "new", 3, &err), EL_OK);
    struct stat st;
    assert_int_equal(lstat(link, &st), 0);
    assert_true(S_ISLNK(st.st_mode));
    read_text(target, text, sizeof text, &exists);
    assert_string_equal(text, "new");
    /* The replaced file keeps its permissions. */
    assert_int_equal(stat(target, &st), 0);
    assert_int_equal(st.st_mode & 0777, 0640);
}

static void test_device_is_written_in_place(void **state)
{
    (void)state;
    el_path_id id;
    el_error err;
    el_error_clear(&err);
    assert_int_equal(el_output_resolve("/dev/null", &id, &err), EL_OK);
    assert_int_equal(id.kind, EL_OUT_STREAM);
    assert_int_equal(el_write_file_atomic("/dev/null", "x", 1, &err), EL_OK);
    struct stat st;
    assert_int_equal(lstat("/dev/null", &st), 0);
    assert_true(S_ISCHR(st.st_mode));
}

static void test_folder_is_not_an_output(void **state)
{
    fixture *f = *state;
    el_path_id id;
    el_error err;
    el_error_clear(&err);
    assert_int_equal(el_output_resolve(f->dir, &id, &err), EL_ERR_IO);
    assert_non_null(strstr(err.message, "folder"));
}

static void test_path_identity(void **state)
{
    fixture *f = *state;
    char a[512], dotted[512], hard[512], other[512], fresh[512], fresh2[512];
    path_in(f, "a.csv", a, sizeof a);
    path_in(f, "./a.csv", dotted, sizeof dotted);
    path_in(f, "hard.csv", hard, sizeof hard);
    path_in(f, "other.csv", other, sizeof other);
    path_in(f, "new.json", fresh, sizeof fresh);
    path_in(f, "../", fresh2, sizeof fresh2);
    size_t len = strlen(fresh2);
    const char *base = strrchr(f->dir, '/') + 1;
    snprintf(fresh2 + len, sizeof fresh2 - len, "%s/new.json", base);
    FILE *t = fopen(a, "w");
    assert_non_null(t);
    fclose(t);
    t = fopen(other, "w");
    assert_non_null(t);
    fclose(t);
    assert_int_equal(link(a, hard), 0);

    el_path_id in, out;
    el_error err;
    el_error_clear(&err);
    el_input_identify(a, &in);
    assert_int_equal(el_output_resolve(dotted, &out, &err), EL_OK);
    assert_true(el_path_same(&in, &out));
    assert_int_equal(el_output_resolve(hard, &out, &err), EL_OK);
    assert_true(el_path_same(&in, &out));   /* same inode, other name */
    assert_int_equal(el_output_resolve(other, &out, &err), EL_OK);
    assert_false(el_path_same(&in, &out));

    /* Two spellings of a file that does not exist yet. */
    el_path_id n1, n2;
    assert_int_equal(el_output_resolve(fresh, &n1, &err), EL_OK);
    assert_int_equal(el_output_resolve(fresh2, &n2, &err), EL_OK);
    assert_int_equal(n1.kind, EL_OUT_NEW);
    assert_true(el_path_same(&n1, &n2));
    assert_false(el_path_same(&n1, &in));
}

static void test_make_folders(void **state)
{
    fixture *f = *state;
    char deep[512], file[512], under[512];
    path_in(f, "x/y/z", deep, sizeof deep);
    el_error err;
    el_error_clear(&err);
    assert_int_equal(el_make_folders(deep, &err), EL_OK);
    struct stat st;
    assert_int_equal(stat(deep, &st), 0);
    assert_true(S_ISDIR(st.st_mode));
    assert_int_equal(el_make_folders(deep, &err), EL_OK);   /* exists: fine */

    path_in(f, "plain", file, sizeof file);
    FILE *t = fopen(file, "w");
    assert_non_null(t);
    fclose(t);
    path_in(f, "plain/sub", under, sizeof under);
    assert_int_equal(el_make_folders(under, &err), EL_ERR_IO);
    assert_true(err.hint[0] != '\0');
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test_setup_teardown(test_two_files_written_whole, setup, teardown),
        cmocka_unit_test_setup_teardown(test_failure_of_one_leaves_none, setup, teardown),
        cmocka_unit_test_setup_teardown(test_symlink_target_updated_link_kept, setup, teardown),
        cmocka_unit_test_setup_teardown(test_device_is_written_in_place, setup, teardown),
        cmocka_unit_test_setup_teardown(test_folder_is_not_an_output, setup, teardown),
        cmocka_unit_test_setup_teardown(test_path_identity, setup, teardown),
        cmocka_unit_test_setup_teardown(test_make_folders, setup, teardown),
    };
    return cmocka_run_group_tests_name("io", tests, NULL, NULL);
}
