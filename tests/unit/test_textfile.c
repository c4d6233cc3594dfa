/* test_textfile.c - unit tests of src/base/textfile.c: tg_read_text returns the
 * whole file, NUL-terminated, and refuses a missing or too large file with a
 * message naming it; tg_make_dirs makes nested
 * folders, accepts existing ones and refuses a file in the way;
 * tg_tmp_open/tg_tmp_commit put the whole text at PATH (replacing an older
 * file) and leave no PATH.tmp behind; tg_dir_of gives a path's folder
 * (".", "/" or the part before the last slash, as POSIX dirname does for
 * these cases: common practice); tg_json_string and tg_json_number
 * write what RFC 8259 allows.
 *
 * Sources: the escapes of '"', '\\' and control characters as \uXXXX, and
 * "null" for a value with no JSON number, follow RFC 8259 (Bray 2017, The
 * JavaScript Object Notation (JSON) Data Interchange Format), sections 6
 * and 7; mkdir -p behaviour and write-then-rename are common practice.
 * Files go to a fresh folder under $TMPDIR, removed at the end.
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#define _POSIX_C_SOURCE 200809L

#include <check.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include "status.h"
#include "textfile.h"
#include "unit_util.h"

static char g_dir[256];

static int is_dir(const char *path)
{
    struct stat sb;
    return stat(path, &sb) == 0 && S_ISDIR(sb.st_mode);
}

/* The whole content of path (malloc'ed), NULL when it cannot be read. */
static char *slurp(const char *path)
{
    FILE *f = fopen(path, "r");
    if (!f)
        return NULL;
    char *s = calloc(4096, 1);
    if (s && fread(s, 1, 4095, f) == 0 && ferror(f)) {
        free(s);
        s = NULL;
    }
    fclose(f);
    return s;
}

START_TEST(test_read_text)
{
    char path[512];
    tg_status st;
    tg_status_clear(&st);
    /* 10000 bytes: more than the first 4096-byte buffer, so it must grow. */
    snprintf(path, sizeof path, "%s/long.ini", g_dir);
    FILE *f = fopen(path, "w");
    ck_assert_ptr_nonnull(f);
    for (int i = 0; i < 1000; i++)
        fprintf(f, "k%04d = 1\n", i);
    fclose(f);
    char *buf = NULL;
    size_t len = 0;
    ck_assert_int_eq(tg_read_text(path, "test file", 1L << 20, &buf, &len, &st), TG_OK);
    ck_assert_uint_eq(len, 10000);
    ck_assert_uint_eq(strlen(buf), 10000);
    ck_assert(strncmp(buf, "k0000 = 1\nk0001 = 1\n", 20) == 0);
    ck_assert_str_eq(buf + 9990, "k0999 = 1\n");
    free(buf);
    /* Exactly at the limit: read; one byte over it: refused, naming the
     * file and what it is. */
    ck_assert_int_eq(tg_read_text(path, "test file", 10000, &buf, &len, &st), TG_OK);
    ck_assert_uint_eq(len, 10000);
    free(buf);
    buf = NULL;
    ck_assert_int_eq(tg_read_text(path, "test file", 9999, &buf, &len, &st), TG_ERR_CONFIG);
    ck_assert_ptr_null(buf);
    ck_assert_msg(strstr(st.msg, "long.ini") && strstr(st.msg, "test file"), "message: %s",
                  st.msg);
    /* Missing. */
    snprintf(path, sizeof path, "%s/absent.ini", g_dir);
    ck_assert_int_eq(tg_read_text(path, "sweep file", 1L << 20, &buf, &len, &st), TG_ERR_IO);
    ck_assert_ptr_null(buf);
    ck_assert_msg(strstr(st.msg, "cannot open sweep file") && strstr(st.msg, "absent.ini"),
                  "message: %s", st.msg);
}
END_TEST

START_TEST(test_make_dirs)
{
    char path[512], file[512];
    tg_status st;
    tg_status_clear(&st);
    snprintf(path, sizeof path, "%s/a/b/c", g_dir);
    ck_assert_int_eq(tg_make_dirs(path, &st), TG_OK);
    ck_assert(is_dir(path));
    ck_assert_int_eq(tg_make_dirs(path, &st), TG_OK); /* exists already */

    snprintf(file, sizeof file, "%s/a/plain", g_dir);
    FILE *f = fopen(file, "w");
    ck_assert_ptr_nonnull(f);
    fclose(f);
    snprintf(path, sizeof path, "%s/a/plain/d", g_dir);
    ck_assert_int_eq(tg_make_dirs(path, &st), TG_ERR_IO);
    ck_assert_msg(strstr(st.msg, "a/plain") != NULL, "message names the folder: %s", st.msg);
    ck_assert_int_eq(tg_make_dirs(file, &st), TG_ERR_IO);
    ck_assert_msg(strstr(st.msg, "not a directory") != NULL, "message: %s", st.msg);
}
END_TEST

START_TEST(test_tmp_commit)
{
    char path[512], tmp[600];
    tg_status st;
    tg_status_clear(&st);
    snprintf(path, sizeof path, "%s/table.csv", g_dir);
    for (int round = 0; round < 2; round++) {
        FILE *f = tg_tmp_open(path, tmp, sizeof tmp, &st);
        ck_assert_ptr_nonnull(f);
        ck_assert_msg(strstr(tmp, ".tmp") != NULL, "temporary name %s", tmp);
        fprintf(f, "round,%d\n", round);
        ck_assert_int_eq(tg_tmp_commit(f, tmp, path, &st), TG_OK);
        ck_assert_int_ne(access(tmp, F_OK), 0);
        char *s = slurp(path);
        char want[32];
        snprintf(want, sizeof want, "round,%d\n", round);
        ck_assert_ptr_nonnull(s);
        ck_assert_str_eq(s, want);
        free(s);
    }
    /* A folder that does not exist: no file, a message naming it. */
    snprintf(path, sizeof path, "%s/missing/table.csv", g_dir);
    ck_assert_ptr_null(tg_tmp_open(path, tmp, sizeof tmp, &st));
    ck_assert_int_eq(st.code, TG_ERR_IO);
    ck_assert_msg(strstr(st.msg, "missing/table.csv.tmp") != NULL, "message: %s", st.msg);
}
END_TEST

START_TEST(test_json)
{
    char path[512];
    snprintf(path, sizeof path, "%s/values.json", g_dir);
    FILE *f = fopen(path, "w");
    ck_assert_ptr_nonnull(f);
    tg_json_string(f, "a\"b\\c\nd\te");
    fputc(' ', f);
    tg_json_number(f, 0.1);
    fputc(' ', f);
    tg_json_number(f, -2.5e-300);
    fputc(' ', f);
    tg_json_number(f, NAN);
    fputc(' ', f);
    tg_json_number(f, INFINITY);
    fclose(f);
    char *s = slurp(path);
    ck_assert_ptr_nonnull(s);
    ck_assert_str_eq(s, "\"a\\\"b\\\\c\\u000ad\\u0009e\" 0.1 -2.5e-300 null null");
    free(s);
}
END_TEST

START_TEST(test_dir_of)
{
    char d[16];
    tg_dir_of("twin.ini", d, sizeof d);
    ck_assert_str_eq(d, ".");
    tg_dir_of("/twin.ini", d, sizeof d);
    ck_assert_str_eq(d, "/");
    tg_dir_of("cfg/sub/twin.ini", d, sizeof d);
    ck_assert_str_eq(d, "cfg/sub");
    tg_dir_of("/a/b", d, sizeof d);
    ck_assert_str_eq(d, "/a");
    tg_dir_of("a-rather-long-folder/x", d, sizeof d); /* cut to the buffer */
    ck_assert_str_eq(d, "a-rather-long-f");
}
END_TEST

static Suite *suite(void)
{
    Suite *s = suite_create("textfile");
    TCase *tc = tcase_create("core");
    tcase_add_test(tc, test_read_text);
    tcase_add_test(tc, test_make_dirs);
    tcase_add_test(tc, test_tmp_commit);
    tcase_add_test(tc, test_json);
    tcase_add_test(tc, test_dir_of);
    suite_add_tcase(s, tc);
    return s;
}

int main(void)
{
    return tg_unit_run_in_scratch(suite(), g_dir, sizeof g_dir, "textfile");
}
