#include <stdio.h>
#include <stdlib.h>
#include <unistd.h>

#include "lopside/util/outfile.h"
#include "lopside/util/strutil.h"
#include "testutil.h"

START_TEST(commit_replaces_and_abandon_keeps_the_old_file)
{
    char dir[] = "/tmp/lopside-outfile-XXXXXX";
    ck_assert_ptr_nonnull(mkdtemp(dir));
    char path[128];
    snprintf(path, sizeof path, "%s/out.json", dir);
    lop_error err = {0};
    lop_outfile out;
    ck_assert_int_eq(lop_outfile_open(&out, path, &err), LOP_OK);
    fputs("first", out.file);
    ck_assert_int_eq(lop_outfile_commit(&out, &err), LOP_OK);

    ck_assert_int_eq(lop_outfile_open(&out, path, &err), LOP_OK);
    fputs("second, never finished", out.file);
    lop_outfile_abandon(&out);

    size_t len;
    char *text = lop_read_whole_file(path, &len);
    ck_assert_str_eq(text, "first");
    free(text);
    remove(path);
    ck_assert_int_eq(rmdir(dir), 0); /* fails if a temporary was left behind */
}
END_TEST

START_TEST(finish_keeps_the_temporary_until_commit)
{
    char dir[] = "/tmp/lopside-outfile-XXXXXX";
    ck_assert_ptr_nonnull(mkdtemp(dir));
    char path[128];
    snprintf(path, sizeof path, "%s/out.csv", dir);
    lop_error err = {0};
    lop_outfile out;
    ck_assert_int_eq(lop_outfile_open(&out, path, &err), LOP_OK);
    fputs("old", out.file);
    ck_assert_int_eq(lop_outfile_commit(&out, &err), LOP_OK);

    /* Finished but abandoned: the old file stays and the temporary goes. */
    ck_assert_int_eq(lop_outfile_open(&out, path, &err), LOP_OK);
    fputs("new, abandoned", out.file);
    ck_assert_int_eq(lop_outfile_finish(&out, &err), LOP_OK);
    ck_assert_ptr_null(out.file);
    lop_outfile_abandon(&out);
    size_t len;
    char *text = lop_read_whole_file(path, &len);
    ck_assert_str_eq(text, "old");
    free(text);

    /* Finished, then committed: the new bytes replace the old. */
    ck_assert_int_eq(lop_outfile_open(&out, path, &err), LOP_OK);
    fputs("new", out.file);
    ck_assert_int_eq(lop_outfile_finish(&out, &err), LOP_OK);
    ck_assert_int_eq(lop_outfile_commit(&out, &err), LOP_OK);
    text = lop_read_whole_file(path, &len);
    ck_assert_str_eq(text, "new");
    free(text);
    remove(path);
    ck_assert_int_eq(rmdir(dir), 0); /* fails if a temporary was left behind */
}
END_TEST

START_TEST(missing_folder_fails_naming_the_path)
{
    lop_error err = {0};
    lop_outfile out;
    ck_assert_int_eq(lop_outfile_open(&out, "/nonexistent-folder/x.json", &err), LOP_ERUN);
    ck_assert_ptr_nonnull(strstr(err.message, "/nonexistent-folder/x.json"));
}
END_TEST

Suite *suite_outfile(void)
{
    Suite *s = suite_create("outfile");
    TCase *tc = tcase_create("outfile");
    tcase_add_test(tc, commit_replaces_and_abandon_keeps_the_old_file);
    tcase_add_test(tc, finish_keeps_the_temporary_until_commit);
    tcase_add_test(tc, missing_folder_fails_naming_the_path);
    suite_add_tcase(s, tc);
    return s;
}
