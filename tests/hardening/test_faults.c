/* Faults while writing a grid: the disk fills (RLIMIT_FSIZE in a child
 * process, SIGXFSZ ignored so write() fails with EFBIG), the directory is
 * not writable, the target is a directory, the path is too long, the
 * directory does not exist.  Each time the previous file must be intact
 * (same bytes, still opens), no temporary file may be left, and the writer
 * must return HRT_E_IO with a message.  A write with room enough must
 * replace the file (the control that shows the check can see a change).
 *
 * hrt_accuracy_store, which adds a group to an existing grid, goes the same
 * way: with no room, through a FIFO, a link and a device the old file (or
 * the FIFO) is untouched and nothing is left beside it.
 *
 * Usage: test_faults [GENERATOR]: with the default-grid generator, it is
 * also run with too little room over an existing grid. */
#include <dirent.h>
#include <errno.h>
#include <fcntl.h>
#include <signal.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/resource.h>
#include <sys/stat.h>
#include <sys/wait.h>
#include <unistd.h>

#include "hrtrail.h"
#include "synth.h"
#include "hard.h"

static char dir[64];
static long faults;

static long file_size(const char *p)
{
    struct stat st;
    return stat(p, &st) == 0 ? (long)st.st_size : -1;
}

static unsigned char *slurp(const char *p, long *n)
{
    FILE *f = fopen(p, "rb");
    *n = file_size(p);
    if (!f || *n < 0)
        return NULL;
    unsigned char *b = malloc((size_t)*n + 1);
    if (b && fread(b, 1, (size_t)*n, f) != (size_t)*n) {
        free(b);
        b = NULL;
    }
    fclose(f);
    return b;
}

static int same_bytes(const char *p, const unsigned char *want, long n)
{
    long m;
    unsigned char *b = slurp(p, &m);
    int eq = b && m == n && memcmp(b, want, (size_t)n) == 0;
    free(b);
    return eq;
}

/* Files in d other than the expected ones. */
static int stray_files(const char *d, const char *keep1, const char *keep2)
{
    DIR *dd = opendir(d);
    int n = 0;
    struct dirent *de;
    while (dd && (de = readdir(dd))) {
        if (!strcmp(de->d_name, ".") || !strcmp(de->d_name, "..") || (keep1 && !strcmp(de->d_name, keep1)) ||
            (keep2 && !strcmp(de->d_name, keep2)))
            continue;
        fprintf(stderr, "  stray file: %s/%s\n", d, de->d_name);
        n++;
    }
    if (dd)
        closedir(dd);
    return n;
}

static int opens(const char *p)
{
    hrt_grid *g = NULL;
    int rc = hrt_grid_open(p, &g, NULL);
    hrt_grid_close(g);
    return rc == HRT_OK;
}

static int open_fds(void)
{
    DIR *d = opendir("/proc/self/fd");
    int n = 0;
    while (d && readdir(d))
        n++;
    if (d)
        closedir(d);
    return n;
}

/* Write spec to path in a child with a file-size limit (bytes, or -1 for
 * none) and optionally as an unprivileged user; returns the writer's code,
 * or -100 - signal if the child was killed. */
static int child_write(const synth_spec *s, const char *path, long limit, int drop_privileges)
{
    fflush(NULL);
    pid_t pid = fork();
    if (pid == 0) {
        signal(SIGXFSZ, SIG_IGN);
        if (drop_privileges && geteuid() == 0) {
            if (setgid(65534) != 0 || setuid(65534) != 0)
                _exit(120);
        }
        if (limit >= 0) {
            struct rlimit rl = {(rlim_t)limit, (rlim_t)limit};
            if (setrlimit(RLIMIT_FSIZE, &rl) != 0)
                _exit(121);
        }
        hrt_error e = {0, ""};
        int fds = open_fds();
        int rc = synth_write(s, path, &e);
        if (rc != HRT_OK && (e.code != rc || strlen(e.message) < 10))
            _exit(122);
        if (open_fds() != fds)
            _exit(123); /* a failed write must not keep the file open */
        exit(rc);       /* exit, not _exit: HDF5's exit handler must survive the failure too */
    }
    int st = 0;
    waitpid(pid, &st, 0);
    if (WIFSIGNALED(st))
        return -100 - WTERMSIG(st);
    return WEXITSTATUS(st);
}

static const synth_spec spec_a = {3, 4, 2, 1, 0, 0.3, 1.0, 10.0};
static const synth_spec spec_b = {6, 8, 3, 1, 1, 0.3, 1.0, 10.0};

static void disk_full(void)
{
    char path[128];
    snprintf(path, sizeof path, "%s/grid.h5", dir);
    hrt_error e;
    HARD_CHECK(synth_write(&spec_a, path, &e) == HRT_OK, "grid A: %s", e.message);
    long na;
    unsigned char *a = slurp(path, &na);
    /* How big B is, written elsewhere. */
    char probe[128];
    snprintf(probe, sizeof probe, "%s/probe.h5", dir);
    HARD_CHECK(synth_write(&spec_b, probe, &e) == HRT_OK, "grid B: %s", e.message);
    long nb = file_size(probe);
    unlink(probe);
    HARD_CHECK(nb > 4096 && a != NULL, "sizes %ld %ld", na, nb);
    /* Limits from nothing at all to one byte short of the whole file. */
    long limits[40];
    int nl = 0;
    limits[nl++] = 0;
    for (long l = 1; l < nb && nl < 36; l = l * 2 + 1)
        limits[nl++] = l;
    limits[nl++] = nb / 2;
    limits[nl++] = nb - 4096;
    limits[nl++] = nb - 1;
    for (int k = 0; k < nl; k++) {
        int rc = child_write(&spec_b, path, limits[k], 0);
        faults++;
        HARD_CHECK(rc == HRT_E_IO, "file size limit %ld of %ld bytes: writer returned %d, not HRT_E_IO (123: file "
                   "left open, -111: crashed)", limits[k], nb, rc);
        HARD_CHECK(same_bytes(path, a, na), "limit %ld: the previous grid was changed", limits[k]);
        HARD_CHECK(stray_files(dir, "grid.h5", NULL) == 0, "limit %ld: temporary file left behind", limits[k]);
    }
    HARD_CHECK(opens(path), "previous grid no longer opens");
    /* Control: with room enough the file is replaced. */
    int rc = child_write(&spec_b, path, nb, 0);
    HARD_CHECK(rc == HRT_OK, "limit = file size: %d", rc);
    HARD_CHECK(!same_bytes(path, a, na) && file_size(path) == nb, "control write did not replace the grid");
    HARD_CHECK(stray_files(dir, "grid.h5", NULL) == 0, "control: temporary file left");
    printf("faults: disk full at %d sizes between 0 and %ld bytes: previous grid kept, nothing left behind\n", nl,
           nb - 1);
    unlink(path);
    free(a);
}

static void unwritable_dir(void)
{
    char sub[128], path[160];
    snprintf(sub, sizeof sub, "%s/ro", dir);
    HARD_CHECK(mkdir(sub, 0755) == 0, "mkdir %s", sub);
    snprintf(path, sizeof path, "%s/grid.h5", sub);
    hrt_error e;
    HARD_CHECK(synth_write(&spec_a, path, &e) == HRT_OK, "grid A: %s", e.message);
    long na;
    unsigned char *a = slurp(path, &na);
    chmod(path, 0644);
    chmod(sub, 0555);
    int rc = child_write(&spec_b, path, -1, 1);
    faults++;
    HARD_CHECK(rc == HRT_E_IO, "unwritable directory: writer returned %d, not HRT_E_IO", rc);
    HARD_CHECK(same_bytes(path, a, na) && opens(path), "unwritable directory: previous grid changed");
    HARD_CHECK(stray_files(sub, "grid.h5", NULL) == 0, "unwritable directory: file left behind");
    /* The file itself read-only in a writable directory: replacing it is
     * allowed (rename), as for any atomic writer; it must then be B. */
    chmod(sub, 0755);
    free(a);
    unlink(path);
    rmdir(sub);
    printf("faults: unwritable directory: HRT_E_IO, previous grid kept\n");
}

static void other_faults(void)
{
    hrt_error e;
    char path[4200];
    /* the target is a directory: the rename fails, the temporary goes */
    snprintf(path, sizeof path, "%s/adir", dir);
    HARD_CHECK(mkdir(path, 0755) == 0, "mkdir");
    int rc = synth_write(&spec_a, path, &e);
    faults++;
    HARD_CHECK(rc == HRT_E_IO && strstr(e.message, "rename"), "target is a directory: %d '%s'", rc, e.message);
    HARD_CHECK(stray_files(dir, "adir", NULL) == 0, "target is a directory: temporary file left");
    struct stat st;
    HARD_CHECK(stat(path, &st) == 0 && S_ISDIR(st.st_mode), "the directory was replaced");
    rmdir(path);
    /* a path longer than the system allows */
    int k = snprintf(path, sizeof path, "%s/", dir);
    memset(path + k, 'x', 4000);
    path[k + 4000] = '\0';
    rc = synth_write(&spec_a, path, &e);
    faults++;
    HARD_CHECK(rc == HRT_E_IO, "path too long: %d '%s'", rc, e.message);
    HARD_CHECK(stray_files(dir, NULL, NULL) == 0, "path too long: file left");
    /* a directory that does not exist */
    snprintf(path, sizeof path, "%s/no/such/dir/grid.h5", dir);
    rc = synth_write(&spec_a, path, &e);
    faults++;
    HARD_CHECK(rc == HRT_E_IO && strstr(e.message, "temporary"), "missing directory: %d '%s'", rc, e.message);
    /* a path through a regular file */
    snprintf(path, sizeof path, "%s/plain", dir);
    FILE *f = fopen(path, "w");
    fputs("x", f);
    fclose(f);
    snprintf(path, sizeof path, "%s/plain/grid.h5", dir);
    rc = synth_write(&spec_a, path, &e);
    faults++;
    HARD_CHECK(rc == HRT_E_IO, "path through a file: %d '%s'", rc, e.message);
    snprintf(path, sizeof path, "%s/plain", dir);
    HARD_CHECK(stray_files(dir, "plain", NULL) == 0, "path through a file: stray file");
    unlink(path);
    printf("faults: target a directory, path too long, missing directory, path through a file: HRT_E_IO, nothing left\n");
}

/* The default-grid generator, run with too little room over a grid. */
static void generator(const char *gen)
{
    char path[128];
    snprintf(path, sizeof path, "%s/default.h5", dir);
    hrt_error e;
    HARD_CHECK(synth_write(&spec_a, path, &e) == HRT_OK, "grid A: %s", e.message);
    long na;
    unsigned char *a = slurp(path, &na);
    const long limits[2] = {0, 1L << 20};
    for (int k = 0; k < 2; k++) {
        fflush(NULL);
        pid_t pid = fork();
        if (pid == 0) {
            signal(SIGXFSZ, SIG_IGN);
            struct rlimit rl = {(rlim_t)limits[k], (rlim_t)limits[k]};
            setrlimit(RLIMIT_FSIZE, &rl);
            int fd = open("/dev/null", O_WRONLY);
            dup2(fd, 2);
            execl(gen, gen, path, (char *)NULL);
            _exit(127);
        }
        int st = 0;
        waitpid(pid, &st, 0);
        faults++;
        HARD_CHECK(WIFEXITED(st) && WEXITSTATUS(st) != 0 && WEXITSTATUS(st) != 127,
                   "generator with %ld bytes of room: status %d", limits[k], st);
        HARD_CHECK(same_bytes(path, a, na), "generator with %ld bytes of room changed the previous grid", limits[k]);
        HARD_CHECK(stray_files(dir, "default.h5", NULL) == 0, "generator left a temporary file");
    }
    printf("faults: default-grid generator with 0 and 1 MiB of room: fails, previous grid kept, nothing left\n");
    free(a);
    unlink(path);
}

/* hrt_accuracy_store of acc into path in a child with a file-size limit;
 * returns the code (sent back through a pipe, not the exit status: under
 * valgrind the child's exit status is valgrind's own when it reports the
 * HDF5 thread-local state below), or -100 - signal, or -99 when none came. */
static int child_store(hrt_accuracy *acc, const char *path, long limit)
{
    int fds[2];
    if (pipe(fds) != 0)
        return -98;
    fflush(NULL);
    pid_t pid = fork();
    if (pid == 0) {
        close(fds[0]);
        signal(SIGXFSZ, SIG_IGN);
        struct rlimit rl = {(rlim_t)limit, (rlim_t)limit};
        int rc = 121;
        if (setrlimit(RLIMIT_FSIZE, &rl) == 0) {
            hrt_error e = {0, ""};
            rc = hrt_accuracy_store(acc, path, &e);
            if (rc != HRT_OK && (e.code != rc || strlen(e.message) < 10))
                rc = 122;
        }
        hrt_accuracy_free(acc);
        ssize_t w = write(fds[1], &rc, sizeof rc);
        (void)w;
        /* _exit: the run's threads (OpenMP, in the parent) left HDF5 thread-local state that
         * the child cannot free, which LeakSanitizer and valgrind report at its exit; the
         * stores in the parent below are checked for leaks, and HDF5 never writes to the
         * disk here */
        _exit(0);
    }
    close(fds[1]);
    int rc = -99;
    if (read(fds[0], &rc, sizeof rc) != (ssize_t)sizeof rc)
        rc = -99;
    close(fds[0]);
    int st = 0;
    waitpid(pid, &st, 0);
    return rc == -99 && WIFSIGNALED(st) ? -100 - WTERMSIG(st) : rc;
}

static int has_field(const char *p)
{
    hrt_grid *g = NULL;
    int ok = hrt_grid_open(p, &g, NULL) == HRT_OK && hrt_grid_has_interp_error(g);
    hrt_grid_close(g);
    return ok;
}

/* Storing an error field never edits the grid in place. */
static void accuracy_store(void)
{
    char path[128], link[128], fifo[128];
    snprintf(path, sizeof path, "%s/grid.h5", dir);
    snprintf(link, sizeof link, "%s/link.h5", dir);
    snprintf(fifo, sizeof fifo, "%s/fifo.h5", dir);
    hrt_error e;
    HARD_CHECK(synth_write(&spec_b, path, &e) == HRT_OK, "grid B: %s", e.message);
    hrt_grid *g = NULL;
    hrt_accuracy *acc = NULL;
    HARD_CHECK(hrt_grid_open(path, &g, &e) == HRT_OK && hrt_accuracy_new(&acc, &e) == HRT_OK &&
                   hrt_accuracy_run(acc, g, &e) == HRT_OK, "accuracy run: %s", e.message);
    hrt_grid_close(g);
    long na;
    unsigned char *a = slurp(path, &na);
    /* no room for the copy, then room for the copy but not for the group */
    const long limits[3] = {0, na / 2, na};
    for (int k = 0; k < 3; k++) {
        int rc = child_store(acc, path, limits[k]);
        faults++;
        HARD_CHECK(rc == HRT_E_IO, "store with %ld of %ld bytes of room: %d, not HRT_E_IO", limits[k], na, rc);
        HARD_CHECK(same_bytes(path, a, na) && !has_field(path), "store with %ld bytes of room changed the grid",
                   limits[k]);
        HARD_CHECK(stray_files(dir, "grid.h5", NULL) == 0, "store with %ld bytes of room left a file", limits[k]);
    }
    /* a FIFO is refused without being opened (no reader: an open would block) */
    HARD_CHECK(mkfifo(fifo, 0644) == 0, "mkfifo %s", fifo);
    int rc = hrt_accuracy_store(acc, fifo, &e);
    faults++;
    struct stat st;
    HARD_CHECK(rc == HRT_E_IO && strstr(e.message, "FIFO"), "store into a FIFO: %d '%s'", rc, e.message);
    HARD_CHECK(stat(fifo, &st) == 0 && S_ISFIFO(st.st_mode), "the FIFO was replaced");
    HARD_CHECK(stray_files(dir, "grid.h5", "fifo.h5") == 0, "store into a FIFO left a file");
    unlink(fifo);
    rc = hrt_accuracy_store(acc, "/dev/null", &e);
    faults++;
    HARD_CHECK(rc == HRT_E_IO && strstr(e.message, "device"), "store into /dev/null: %d '%s'", rc, e.message);
    /* control, through a link: the file it names gets the field, the link stays */
    HARD_CHECK(symlink("grid.h5", link) == 0, "symlink %s", link);
    rc = hrt_accuracy_store(acc, link, &e);
    HARD_CHECK(rc == HRT_OK, "store through a link: %s", e.message);
    HARD_CHECK(lstat(link, &st) == 0 && S_ISLNK(st.st_mode), "the link was replaced");
    HARD_CHECK(!same_bytes(path, a, na) && has_field(path), "the store did not reach the grid through the link");
    HARD_CHECK(stray_files(dir, "grid.h5", "link.h5") == 0, "store through a link left a file");
    printf("faults: error-field store with 0, half and all of the grid's size of room, into a FIFO and a device: "
           "refused, grid kept, nothing left; through a link: stored, link kept\n");
    hrt_accuracy_free(acc);
    unlink(link);
    unlink(path);
    free(a);
}

int main(int argc, char **argv)
{
    snprintf(dir, sizeof dir, "/tmp/hrt-faults-XXXXXX");
    if (!mkdtemp(dir))
        return EXIT_FAILURE;
    chmod(dir, 0755); /* an unprivileged child must reach ro/ */
    disk_full();
    unwritable_dir();
    other_faults();
    accuracy_store();
    if (argc > 1)
        generator(argv[1]);
    printf("faults: %ld faults injected\n", faults);
    HARD_CHECK(stray_files(dir, NULL, NULL) == 0, "files left in %s", dir);
    rmdir(dir);
    return hard_finish("faults");
}
