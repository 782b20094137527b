/*
 * Files the hrtrail command writes (-o): never half written, never through a planted link.
 *
 * A regular file (or one that does not exist yet) is written to a new temporary file that
 * mkstemp() creates beside it (O_EXCL: a link planted at any name is not followed, and the
 * name is not predictable), which is renamed over it once every byte is on the disk; it gets
 * the mode, owner and group of the file it replaces (a new file: 0644 less the umask).  A
 * symbolic link is written through: the file at the end of its chain is replaced, beside
 * itself, and the link stays.  Standard output, a device (/dev/null) or a FIFO is written in
 * place: renaming a file over /dev/null would replace the device for everyone.
 */
#define _XOPEN_SOURCE 700 /* realpath */
#include <errno.h>
#include <fcntl.h>
#include <limits.h>
#include <signal.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "cli.h"

/* ------------------------------------------------------------ interrupted runs */

/* Temporary files being written, removed if a signal ends the command before they are renamed. */
enum { MAX_PENDING = 4 };
static char *volatile pending[MAX_PENDING];

static void on_fatal_signal(int sig)
{
    for (int i = 0; i < MAX_PENDING; i++)
        if (pending[i]) unlink(pending[i]); /* async-signal-safe */
    signal(sig, SIG_DFL);
    raise(sig);
}

static void watch_signals(void)
{
    static int done;
    static const int sigs[] = {SIGINT, SIGTERM, SIGHUP, SIGQUIT};
    if (done) return;
    done = 1;
    /* a file grown past the limit of 'ulimit -f' is a failed write (EFBIG), not the end of the command */
    signal(SIGXFSZ, SIG_IGN);
    for (size_t i = 0; i < sizeof sigs / sizeof sigs[0]; i++) {
        struct sigaction sa, old;
        memset(&sa, 0, sizeof sa);
        sa.sa_handler = on_fatal_signal;
        sigemptyset(&sa.sa_mask);
        if (sigaction(sigs[i], NULL, &old) == 0 && old.sa_handler != SIG_IGN) sigaction(sigs[i], &sa, NULL);
    }
}

static void pending_set(char *tmp, int on)
{
    for (int i = 0; i < MAX_PENDING; i++)
        if (on ? pending[i] == NULL : pending[i] == tmp) {
            pending[i] = on ? tmp : NULL;
            return;
        }
}

/* ------------------------------------------------------------ where to write */

/* The directory part of path ("." for none). */
static char *dir_of(const char *path)
{
    const char *slash = strrchr(path, '/');
    if (!slash) return xstrdup(".");
    if (slash == path) return xstrdup("/");
    char *d = xmalloc((size_t)(slash - path) + 1);
    memcpy(d, path, (size_t)(slash - path));
    d[slash - path] = '\0';
    return d;
}

/* The next file of a link: its contents, relative to the link's directory. */
static char *follow_link(const char *link)
{
    char buf[PATH_MAX];
    ssize_t n = readlink(link, buf, sizeof buf - 1);
    if (n < 0) return NULL;
    buf[n] = '\0';
    if (buf[0] == '/') return xstrdup(buf);
    char *dir = dir_of(link);
    size_t len = strlen(dir) + (size_t)n + 2;
    char *next = xmalloc(len);
    snprintf(next, len, "%s/%s", dir, buf);
    free(dir);
    return next;
}

/* The file path names: path itself, or the end of its chain of symbolic links (resolved with
 * realpath, or one link at a time when the chain ends at a file not yet made).  *exists says
 * whether it exists (then *st is its lstat).  0 or an errno value. */
static int resolve(const char *path, char **target, struct stat *st, int *exists)
{
    char *cur = xstrdup(path);
    for (int hops = 0;; hops++) {
        if (lstat(cur, st) != 0) {
            int e = errno;
            *exists = 0;
            if (e == ENOENT) break;
            free(cur);
            return e;
        }
        *exists = 1;
        if (!S_ISLNK(st->st_mode)) break;
        char *next = hops < 40 ? realpath(cur, NULL) : NULL;
        if (!next && hops < 40 && errno == ENOENT) next = follow_link(cur);
        if (!next) {
            int e = hops < 40 ? errno : ELOOP;
            free(cur);
            return e;
        }
        free(cur);
        cur = next;
    }
    *target = cur;
    return 0;
}

static int is_stream(const struct stat *st)
{
    return S_ISCHR(st->st_mode) || S_ISBLK(st->st_mode) || S_ISFIFO(st->st_mode);
}

/* ------------------------------------------------------------ writing */

static int open_in_place(const cli *c, outfile *o)
{
    /* no O_CREAT: what is not there is not made here; a FIFO waits for its reader */
    int fd = open(o->target, O_WRONLY | O_NOCTTY);
    struct stat st;
    if (fd < 0) return cli_fail(c, CLI_EXIT_FILE, "cannot write '%s': %s", o->path, strerror(errno));
    if (fstat(fd, &st) != 0 || !is_stream(&st)) {
        close(fd);
        return cli_fail(c, CLI_EXIT_FILE, "cannot write '%s': it changed while it was opened", o->path);
    }
    o->f = fdopen(fd, "w");
    if (!o->f) {
        close(fd);
        return cli_fail(c, CLI_EXIT_INTERNAL, "out of memory");
    }
    o->direct = 1;
    return 0;
}

static int open_temporary(const cli *c, outfile *o)
{
    const char *slash = strrchr(o->target, '/');
    const char *base = slash ? slash + 1 : o->target;
    char *dir = dir_of(o->target);
    size_t n = strlen(dir) + strlen(base) + 24;
    o->tmp = xmalloc(n);
    /* hidden, named after the file (at most 200 bytes of its name), random: mkstemp */
    snprintf(o->tmp, n, "%s/.%.200s.tmp-XXXXXX", dir, base);
    free(dir);
    watch_signals();
    int fd = mkstemp(o->tmp);
    if (fd < 0) {
        int e = errno;
        free(o->tmp);
        o->tmp = NULL;
        return cli_fail(c, CLI_EXIT_FILE, "cannot write '%s': %s", o->path, strerror(e));
    }
    pending_set(o->tmp, 1);
    o->f = fdopen(fd, "w");
    if (!o->f) {
        close(fd);
        outfile_abort(o);
        return cli_fail(c, CLI_EXIT_INTERNAL, "out of memory");
    }
    return 0;
}

int outfile_open(const cli *c, outfile *o, const char *path)
{
    int e;
    memset(o, 0, sizeof *o);
    o->path = path;
    if (!path || strcmp(path, "-") == 0) {
        o->f = stdout;
        o->direct = 1;
        o->path = NULL;
        return 0;
    }
    if ((e = resolve(path, &o->target, &o->st, &o->exists)) != 0)
        return cli_fail(c, CLI_EXIT_FILE, "cannot write '%s': %s", path, strerror(e));
    if (o->exists && S_ISDIR(o->st.st_mode)) e = EISDIR;
    if (o->exists && !S_ISREG(o->st.st_mode) && !S_ISDIR(o->st.st_mode) && !is_stream(&o->st)) e = EINVAL;
    if (e) {
        free(o->target);
        o->target = NULL;
        return cli_fail(c, CLI_EXIT_FILE, "cannot write '%s': %s", path,
                        e == EISDIR ? "is a directory" : "not a regular file, a device or a FIFO");
    }
    /* replaced, not opened: a file the user may not write is not replaced either */
    if (o->exists && S_ISREG(o->st.st_mode) && access(o->target, W_OK) != 0) e = errno;
    if (e) {
        free(o->target);
        o->target = NULL;
        return cli_fail(c, CLI_EXIT_FILE, "cannot write '%s': %s", path, strerror(e));
    }
    int rc = o->exists && is_stream(&o->st) ? open_in_place(c, o) : open_temporary(c, o);
    if (rc) {
        free(o->target);
        o->target = NULL;
    }
    return rc;
}

/* Mode, owner and group of the file replaced (owner and group as far as the user may give them:
 * all as root, else perhaps the group), or 0644 less the umask for a new file. */
static int set_mode(const outfile *o, int fd)
{
    mode_t mode;
    if (o->exists) {
        if ((o->st.st_uid != geteuid() || o->st.st_gid != getegid()) && fchown(fd, o->st.st_uid, o->st.st_gid) != 0 &&
            fchown(fd, (uid_t)-1, o->st.st_gid) != 0)
            errno = 0; /* the new file stays the user's */
        mode = o->st.st_mode & 07777;
    } else {
        mode_t mask = umask(0);
        umask(mask);
        mode = 0644 & ~mask;
    }
    return fchmod(fd, mode);
}

/* Everything written and on the disk, then renamed over the target; an errno value or 0. */
static int commit(outfile *o)
{
    int e = 0, fd = fileno(o->f);
    errno = 0;
    if (fflush(o->f) != 0 || ferror(o->f)) e = errno ? errno : EIO;
    if (!e && set_mode(o, fd) != 0) e = errno;
    if (!e && fsync(fd) != 0) e = errno;
    if (fclose(o->f) != 0 && !e) e = errno;
    o->f = NULL;
    if (!e && rename(o->tmp, o->target) != 0) e = errno;
    return e;
}

int outfile_close(const cli *c, outfile *o)
{
    int e = 0;
    errno = 0;
    if (o->tmp) {
        e = commit(o);
        if (e) unlink(o->tmp);
        pending_set(o->tmp, 0);
        free(o->tmp);
    } else if (o->f) {
        if (fflush(o->f) != 0 || ferror(o->f)) e = errno ? errno : EIO;
        if (o->f != stdout && fclose(o->f) != 0 && !e) e = errno;
    }
    free(o->target);
    o->f = NULL;
    o->tmp = o->target = NULL;
    if (e && !o->path) return cli_fail(c, CLI_EXIT_FILE, "cannot write to standard output: %s", strerror(e));
    return e ? cli_fail(c, CLI_EXIT_FILE, "cannot write '%s': %s", o->path, strerror(e)) : 0;
}

void outfile_abort(outfile *o)
{
    if (o->f && o->f != stdout) fclose(o->f);
    if (o->tmp) {
        unlink(o->tmp);
        pending_set(o->tmp, 0);
        free(o->tmp);
    }
    free(o->target);
    o->f = NULL;
    o->tmp = o->target = NULL;
}

/* ------------------------------------------------------------ files the library writes */

int outfile_target(const cli *c, const char *path, const char *what, char **target)
{
    struct stat st;
    int exists = 0, e;
    *target = NULL;
    if (strcmp(path, "-") == 0)
        return cli_fail(c, CLI_EXIT_FILE, "%s '-': a grid cannot be written to standard output; name a file", what);
    if ((e = resolve(path, target, &st, &exists)) != 0)
        return cli_fail(c, CLI_EXIT_FILE, "%s '%s': %s", what, path, strerror(e));
    if (exists && !S_ISREG(st.st_mode)) {
        const char *kind = S_ISDIR(st.st_mode)    ? "is a directory"
                           : S_ISFIFO(st.st_mode) ? "is a FIFO; the file cannot be streamed (it is written whole, then renamed), name a regular file"
                           : is_stream(&st)       ? "is a device; the file cannot be streamed (it is written whole, then renamed), name a regular file"
                                                  : "is not a regular file";
        free(*target);
        *target = NULL;
        return cli_fail(c, CLI_EXIT_FILE, "%s '%s': %s", what, path, kind);
    }
    /* the library replaces the file: one the user may not write is not replaced either */
    if (exists && access(*target, W_OK) != 0) {
        e = errno;
        free(*target);
        *target = NULL;
        return cli_fail(c, CLI_EXIT_FILE, "%s '%s': %s", what, path, strerror(e));
    }
    return 0;
}
