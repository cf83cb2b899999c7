/* Unit tests for io/output: the refusals before any work, writing through temporaries, and the
 * all-or-nothing commit. Every case runs in a fresh folder under $TMPDIR (or /tmp).
 * SPDX-License-Identifier: MIT
 *
 * What the file system does is POSIX.1-2008: lstat sees a link or a node itself, rename replaces
 * a directory entry (never writing through it), PATH_MAX bounds a path (4096 on Linux, with its
 * NUL) and NAME_MAX a component (255 on the usual file systems; read with pathconf here).
 */
#define _GNU_SOURCE
#include <check.h>
#include <dirent.h>
#include <errno.h>
#include <fcntl.h>
#include <limits.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/socket.h>
#include <sys/stat.h>
#include <sys/sysmacros.h>
#include <sys/un.h>
#include <unistd.h>

#include "io/output.h"
#include "tests/unit/ml_check.h"

static char dir[PATH_MAX];

static void setup(void)
{
    const char *t = getenv("TMPDIR");
    snprintf(dir, sizeof dir, "%s/ml-output-XXXXXX", t && *t ? t : "/tmp");
    ck_assert_ptr_nonnull(mkdtemp(dir));
    ck_assert_int_eq(chdir(dir), 0);
}

static void teardown(void)
{
    static char cmd[2 * PATH_MAX + 64];
    ck_assert_int_eq(chdir("/"), 0);
    ck_assert_int_lt(snprintf(cmd, sizeof cmd, "chmod -R u+w '%s'; rm -rf '%s'", dir, dir), (int)sizeof cmd);
    ck_assert_int_eq(system(cmd), 0);
}

static void put(const char *path, const char *text)
{
    FILE *f = fopen(path, "w");
    ck_assert_ptr_nonnull(f);
    fputs(text, f);
    ck_assert_int_eq(fclose(f), 0);
}

static char *get(const char *path)
{
    static char buf[4096];
    FILE *f = fopen(path, "r");
    if (f == NULL)
        return NULL;
    size_t n = fread(buf, 1, sizeof buf - 1, f);
    buf[n] = '\0';
    fclose(f);
    return buf;
}

/* entries of folder d, "." and ".." not counted */
static int entries(const char *d)
{
    DIR *h = opendir(d);
    ck_assert_ptr_nonnull(h);
    int n = 0;
    for (struct dirent *e; (e = readdir(h)) != NULL;)
        n += strcmp(e->d_name, ".") != 0 && strcmp(e->d_name, "..") != 0;
    closedir(h);
    return n;
}

/* A set with the inputs in[] and one output; the check's status, reason in err. */
static ml_status check1(const char *out, const char *in, char *err, size_t n)
{
    const char *ins[1] = {in};
    return ml_output_check_path(out, "the report", ins, in ? 1 : 0, err, n);
}

/* Writes text to path through a fresh set and commits. */
static ml_status write_file(const char *path, const char *text)
{
    ml_output_set *s = NULL;
    ml_output *o = NULL;
    char err[512];
    ck_assert_int_eq(ml_output_set_create(&s), ML_OK);
    ck_assert_int_eq(ml_output_set_add(s, path, "the report", 0, &o), ML_OK);
    ml_status st = ml_output_set_check(s, NULL, err, sizeof err);
    if (st == ML_OK) {
        FILE *f = NULL;
        ck_assert_int_eq(ml_output_begin(o, &f, err, sizeof err), ML_OK);
        fputs(text, f);
        ck_assert_int_eq(ml_output_end(o, err, sizeof err), ML_OK);
        st = ml_output_set_commit(s, NULL, err, sizeof err);
    }
    ml_output_set_destroy(s);
    return st;
}

START_TEST(new_and_replaced_files)
{
    ck_assert_int_eq(write_file("r.json", "one"), ML_OK);
    ck_assert_str_eq(get("r.json"), "one");
    const mode_t um = umask(022);
    umask(um);
    struct stat st;
    ck_assert_int_eq(stat("r.json", &st), 0);
    ck_assert_uint_eq(st.st_mode & 0777, 0666 & ~um); /* as fopen would create it */
    ck_assert_int_eq(chmod("r.json", 0640), 0);
    ck_assert_int_eq(write_file("r.json", "two"), ML_OK);
    ck_assert_str_eq(get("r.json"), "two");
    ck_assert_int_eq(stat("r.json", &st), 0);
    ck_assert_uint_eq(st.st_mode & 0777, 0640); /* a replaced file keeps its permissions */
    ck_assert_int_eq(entries("."), 1);          /* no temporary left */
}
END_TEST

START_TEST(nothing_published_before_the_commit)
{
    put("r.json", "old");
    ml_output_set *s = NULL;
    ml_output *a = NULL, *b = NULL;
    char err[512];
    ck_assert_int_eq(ml_output_set_create(&s), ML_OK);
    ck_assert_int_eq(ml_output_set_add(s, "r.json", "the report", 0, &a), ML_OK);
    ck_assert_int_eq(ml_output_set_add(s, "p.png", "the plot", 0, &b), ML_OK);
    ck_assert_int_eq(ml_output_set_check(s, NULL, err, sizeof err), ML_OK);
    ck_assert_int_eq(entries("."), 1); /* the check's probe left nothing */
    FILE *f = NULL;
    ck_assert_int_eq(ml_output_begin(a, &f, err, sizeof err), ML_OK);
    fputs("new", f);
    ck_assert_int_eq(ml_output_end(a, err, sizeof err), ML_OK);
    ck_assert_int_eq(ml_output_begin(b, &f, err, sizeof err), ML_OK);
    fputs("png", f);
    /* the temporaries sit beside the targets, which are untouched */
    ck_assert_int_eq(entries("."), 3);
    ck_assert_str_eq(get("r.json"), "old");
    ck_assert_int_eq(access("p.png", F_OK), -1);
    /* b is still being written: the commit refuses and publishes nothing */
    ck_assert_int_eq(ml_output_set_commit(s, NULL, err, sizeof err), ML_EIO);
    ck_assert_str_eq(get("r.json"), "old");
    ck_assert_int_eq(entries("."), 1);
    ml_output_set_destroy(s);

    /* an error exit (abort, or destroy without commit) leaves no trace */
    ck_assert_int_eq(ml_output_set_create(&s), ML_OK);
    ck_assert_int_eq(ml_output_set_add(s, "r.json", "the report", 0, &a), ML_OK);
    ck_assert_int_eq(ml_output_set_add(s, "q.pdf", "the PDF", 0, &b), ML_OK);
    ck_assert_int_eq(ml_output_set_check(s, NULL, err, sizeof err), ML_OK);
    ck_assert_int_eq(ml_output_begin(a, &f, err, sizeof err), ML_OK);
    fputs("new", f);
    ck_assert_int_eq(ml_output_end(a, err, sizeof err), ML_OK);
    ml_output_set_destroy(s);
    ck_assert_str_eq(get("r.json"), "old");
    ck_assert_int_eq(entries("."), 1);

    /* a discarded output is skipped, the others published */
    ck_assert_int_eq(ml_output_set_create(&s), ML_OK);
    ck_assert_int_eq(ml_output_set_add(s, "r.json", "the report", 0, &a), ML_OK);
    ck_assert_int_eq(ml_output_set_add(s, "q.pdf", "the PDF", 0, &b), ML_OK);
    ck_assert_int_eq(ml_output_set_check(s, NULL, err, sizeof err), ML_OK);
    ck_assert_int_eq(ml_output_begin(a, &f, err, sizeof err), ML_OK);
    fputs("kept", f);
    ck_assert_int_eq(ml_output_end(a, err, sizeof err), ML_OK);
    ck_assert_int_eq(ml_output_begin(b, &f, err, sizeof err), ML_OK);
    ml_output_discard(b);
    ck_assert_int_eq(ml_output_set_commit(s, NULL, err, sizeof err), ML_OK);
    ml_output_set_destroy(s);
    ck_assert_str_eq(get("r.json"), "kept");
    ck_assert_int_eq(entries("."), 1);
}
END_TEST

START_TEST(special_files_are_refused_and_untouched)
{
    char err[512];
    ck_assert_int_eq(mkfifo("fifo", 0644), 0);
    ck_assert_int_eq(check1("fifo", NULL, err, sizeof err), ML_EIO);
    ck_assert_ptr_nonnull(strstr(err, "FIFO"));
    ck_assert_int_eq(mkdir("adir", 0755), 0);
    ck_assert_int_eq(check1("adir", NULL, err, sizeof err), ML_EIO);
    ck_assert_str_eq(err, "is a directory");
    ck_assert_int_eq(check1("adir/", NULL, err, sizeof err), ML_EIO);
    int sock = socket(AF_UNIX, SOCK_STREAM, 0);
    ck_assert_int_ge(sock, 0);
    struct sockaddr_un sa = {.sun_family = AF_UNIX};
    memcpy(sa.sun_path, "sock", 5); /* relative to the working folder, dir */
    ck_assert_int_eq(bind(sock, (struct sockaddr *)&sa, sizeof sa), 0);
    ck_assert_int_eq(check1("sock", NULL, err, sizeof err), ML_EIO);
    ck_assert_ptr_nonnull(strstr(err, "socket"));
    close(sock);
    /* a device node (the null device's numbers, made here; needs the right to mknod) */
    if (mknod("null", S_IFCHR | 0666, makedev(1, 3)) == 0) {
        ck_assert_int_eq(check1("null", NULL, err, sizeof err), ML_EIO);
        ck_assert_ptr_nonnull(strstr(err, "device"));
        ck_assert_int_eq(write_file("null", "x"), ML_EIO);
        struct stat st;
        ck_assert_int_eq(lstat("null", &st), 0);
        ck_assert(S_ISCHR(st.st_mode)); /* still the node */
    }
    ck_assert_int_eq(write_file("fifo", "x"), ML_EIO);
    struct stat st;
    ck_assert_int_eq(lstat("fifo", &st), 0);
    ck_assert(S_ISFIFO(st.st_mode));
}
END_TEST

START_TEST(symbolic_links_are_written_through_never_replaced)
{
    char err[512];
    put("target.json", "old");
    ck_assert_int_eq(symlink("target.json", "link.json"), 0);
    ck_assert_int_eq(write_file("link.json", "new"), ML_OK);
    struct stat st;
    ck_assert_int_eq(lstat("link.json", &st), 0);
    ck_assert(S_ISLNK(st.st_mode));
    ck_assert_str_eq(get("target.json"), "new");
    /* dangling, looping, or pointing at a FIFO: refused */
    ck_assert_int_eq(symlink("nowhere.json", "dangling.json"), 0);
    ck_assert_int_eq(check1("dangling.json", NULL, err, sizeof err), ML_EIO);
    ck_assert_ptr_nonnull(strstr(err, "symbolic link"));
    ck_assert_int_eq(symlink("loop.json", "loop.json"), 0);
    ck_assert_int_eq(check1("loop.json", NULL, err, sizeof err), ML_EIO);
    ck_assert_int_eq(mkfifo("fifo", 0644), 0);
    ck_assert_int_eq(symlink("fifo", "tofifo"), 0);
    ck_assert_int_eq(check1("tofifo", NULL, err, sizeof err), ML_EIO);
    ck_assert_ptr_nonnull(strstr(err, "FIFO"));
    ck_assert_int_eq(lstat("dangling.json", &st), 0);
    ck_assert(S_ISLNK(st.st_mode));
}
END_TEST

START_TEST(inputs_are_never_replaced)
{
    char err[512];
    put("in.wav", "audio");
    ck_assert_int_eq(check1("in.wav", "in.wav", err, sizeof err), ML_EIO);
    ck_assert_ptr_nonnull(strstr(err, "refusing to overwrite an input"));
    ck_assert_int_eq(check1("./in.wav", "in.wav", err, sizeof err), ML_EIO);
    ck_assert_int_eq(link("in.wav", "hard.wav"), 0); /* another name of the same file */
    ck_assert_int_eq(check1("hard.wav", "in.wav", err, sizeof err), ML_EIO);
    ck_assert_int_eq(symlink("in.wav", "soft.wav"), 0);
    ck_assert_int_eq(check1("soft.wav", "in.wav", err, sizeof err), ML_EIO);
    ck_assert_int_eq(check1("in.wav", "soft.wav", err, sizeof err), ML_EIO); /* input given as a link */
    ck_assert_int_eq(mkdir("sub", 0755), 0);
    ck_assert_int_eq(symlink("..", "sub/up"), 0); /* sub/up/in.wav is in.wav */
    ck_assert_int_eq(check1("sub/up/in.wav", "in.wav", err, sizeof err), ML_EIO);
    ck_assert_str_eq(get("in.wav"), "audio");
    ck_assert_int_eq(check1("other.json", "in.wav", err, sizeof err), ML_OK);
}
END_TEST

START_TEST(outputs_never_share_a_file)
{
    ml_output_set *s = NULL;
    const char *bad = NULL;
    char err[512];
    ck_assert_int_eq(ml_output_set_create(&s), ML_OK);
    ck_assert_int_eq(ml_output_set_add(s, "x.png", "the report (--output)", ML_OUTPUT_STDOUT_OK, NULL), ML_OK);
    ck_assert_int_eq(ml_output_set_add(s, "./x.png", "the pictures (--plot)", 0, NULL), ML_OK);
    ck_assert_int_eq(ml_output_set_check(s, &bad, err, sizeof err), ML_EIO); /* neither exists yet */
    ck_assert_str_eq(bad, "./x.png");
    ck_assert_str_eq(err, "the report (--output) and the pictures (--plot) name the same file");
    ml_output_set_destroy(s);
    /* existing, by a hard link */
    put("a.json", "");
    ck_assert_int_eq(link("a.json", "b.json"), 0);
    ck_assert_int_eq(ml_output_set_create(&s), ML_OK);
    ml_output_set_add(s, "a.json", "one", 0, NULL);
    ml_output_set_add(s, "b.json", "two", 0, NULL);
    ck_assert_int_eq(ml_output_set_check(s, &bad, err, sizeof err), ML_EIO);
    ml_output_set_destroy(s);
    /* standard output: only where allowed, and once */
    ck_assert_int_eq(ml_output_set_create(&s), ML_OK);
    ml_output_set_add(s, "-", "one", ML_OUTPUT_STDOUT_OK, NULL);
    ml_output_set_add(s, "-", "two", ML_OUTPUT_STDOUT_OK, NULL);
    ck_assert_int_eq(ml_output_set_check(s, &bad, err, sizeof err), ML_EIO);
    ck_assert_str_eq(bad, "standard output");
    ml_output_set_destroy(s);
    ck_assert_int_eq(ml_output_set_create(&s), ML_OK);
    ml_output_set_add(s, "-", "the capture (--save)", 0, NULL);
    ck_assert_int_eq(ml_output_set_check(s, &bad, err, sizeof err), ML_EIO);
    ml_output_set_destroy(s);
}
END_TEST

START_TEST(folders_must_exist_and_take_files)
{
    char err[512];
    ck_assert_int_eq(check1("nofolder/r.json", NULL, err, sizeof err), ML_EIO);
    ck_assert_ptr_nonnull(strstr(err, "No such file"));
    put("plain", "");
    ck_assert_int_eq(check1("plain/r.json", NULL, err, sizeof err), ML_EIO);
    ck_assert_int_eq(check1("", NULL, err, sizeof err), ML_EIO);
    ck_assert_int_eq(mkdir("ro", 0555), 0);
    ck_assert_int_eq(chmod("ro", 0555), 0);
    if (geteuid() != 0) { /* root writes anywhere */
        ck_assert_int_eq(check1("ro/r.json", NULL, err, sizeof err), ML_EIO);
        ck_assert_ptr_nonnull(strstr(err, "Permission denied"));
    }
    ck_assert_int_eq(entries("ro"), 0);
}
END_TEST

/* Folders of 200-byte names under dir until the path is `total` bytes long (the last name fills). */
static void long_path(char *out, size_t total)
{
    size_t n = (size_t)snprintf(out, PATH_MAX, "%s", dir);
    while (total - n > 220) {
        out[n++] = '/';
        memset(out + n, 'd', 200);
        n += 200;
        out[n] = '\0';
        ck_assert(mkdir(out, 0755) == 0 || errno == EEXIST);
    }
    out[n++] = '/';
    memset(out + n, 'a', total - n);
    out[total] = '\0';
}

START_TEST(long_paths_are_never_cut)
{
    /* the input's path is 1023 bytes; the report's adds ".json": a cut to 1023 would name the input */
    char in[PATH_MAX], out[PATH_MAX + 8], err[512];
    long_path(in, 1023);
    put(in, "audio");
    snprintf(out, sizeof out, "%s.json", in);
    ck_assert_uint_eq(strlen(out), 1028);
    ck_assert_int_eq(check1(out, in, err, sizeof err), ML_OK);
    ck_assert_int_eq(write_file(out, "report"), ML_OK);
    ck_assert_str_eq(get(in), "audio");
    ck_assert_str_eq(get(out), "report");
    /* PATH_MAX bytes or more: refused by name, not cut */
    static char huge[PATH_MAX + 100];
    long_path(huge, PATH_MAX + 50);
    ck_assert_int_eq(check1(huge, NULL, err, sizeof err), ML_EIO);
    ck_assert_ptr_nonnull(strstr(err, "bytes long"));
    /* a file name longer than the file system allows */
    char name[400];
    memset(name, 'n', 300);
    name[300] = '\0';
    ck_assert_int_eq(check1(name, NULL, err, sizeof err), ML_EIO);
    /* the longest allowed name still gets a temporary (its name is cut, the target's is not) */
    const long name_max = pathconf(".", _PC_NAME_MAX);
    ck_assert_int_gt(name_max, 8);
    memset(name, 'm', (size_t)name_max);
    name[name_max] = '\0';
    ck_assert_int_eq(write_file(name, "x"), ML_OK);
    ck_assert_str_eq(get(name), "x");
    ck_assert_int_eq(entries("."), 2); /* the long name and the folder tree */
}
END_TEST

START_TEST(commit_rechecks_the_target)
{
    ml_output_set *s = NULL;
    ml_output *o = NULL;
    const char *bad = NULL;
    char err[512];
    FILE *f = NULL;
    ck_assert_int_eq(ml_output_set_create(&s), ML_OK);
    ck_assert_int_eq(ml_output_set_add(s, "r.json", "the report", 0, &o), ML_OK);
    ck_assert_int_eq(ml_output_set_check(s, &bad, err, sizeof err), ML_OK);
    ck_assert(!ml_output_exists(o));
    ck_assert_int_eq(ml_output_begin(o, &f, err, sizeof err), ML_OK);
    fputs("x", f);
    ck_assert_int_eq(ml_output_end(o, err, sizeof err), ML_OK);
    ck_assert_int_eq(mkfifo("r.json", 0644), 0); /* appears while the command works */
    ck_assert_int_eq(ml_output_set_commit(s, &bad, err, sizeof err), ML_EIO);
    ck_assert_str_eq(bad, "r.json");
    ml_output_set_destroy(s);
    struct stat st;
    ck_assert_int_eq(lstat("r.json", &st), 0);
    ck_assert(S_ISFIFO(st.st_mode));
    ck_assert_int_eq(entries("."), 1);
}
END_TEST

static Suite *suite(void)
{
    Suite *s = suite_create("io_output");
    TCase *tc = tcase_create("core");
    tcase_add_checked_fixture(tc, setup, teardown);
    tcase_add_test(tc, new_and_replaced_files);
    tcase_add_test(tc, nothing_published_before_the_commit);
    tcase_add_test(tc, special_files_are_refused_and_untouched);
    tcase_add_test(tc, symbolic_links_are_written_through_never_replaced);
    tcase_add_test(tc, inputs_are_never_replaced);
    tcase_add_test(tc, outputs_never_share_a_file);
    tcase_add_test(tc, folders_must_exist_and_take_files);
    tcase_add_test(tc, long_paths_are_never_cut);
    tcase_add_test(tc, commit_rechecks_the_target);
    suite_add_tcase(s, tc);
    return s;
}

int main(void)
{
    return ml_check_run(suite());
}
