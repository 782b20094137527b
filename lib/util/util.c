/* Error reporting and small helpers shared by every layer (util.h). */
#define _XOPEN_SOURCE 700 /* realpath */
#include <errno.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include "util/util.h"

int trail_set_error(hrt_error *err, int code, const char *fmt, ...)
{
    if (err) {
        err->code = code;
        if (fmt) {
            va_list ap;
            va_start(ap, fmt);
            vsnprintf(err->message, sizeof err->message, fmt, ap);
            va_end(ap);
        } else {
            snprintf(err->message, sizeof err->message, "%s", hrt_strerror(code));
        }
    }
    return code;
}

char *trail_strdup(const char *s)
{
    size_t n = strlen(s) + 1;
    char *d = malloc(n);
    if (d)
        memcpy(d, s, n);
    return d;
}

int trail_cmp_double(const void *a, const void *b)
{
    double x = *(const double *)a, y = *(const double *)b;
    if (isnan(x) || isnan(y))
        return isnan(x) - isnan(y);
    return (x > y) - (x < y);
}

/* What a non-regular file is, for a message. */
static const char *trail_kind(mode_t m)
{
    return S_ISFIFO(m) ? "a FIFO" : S_ISDIR(m) ? "a directory" : S_ISCHR(m) || S_ISBLK(m) ? "a device" : "not a regular file";
}

int trail_replace_target(const char *path, const char *who, char **target, unsigned *mode, hrt_error *err)
{
    *target = NULL;
    char *real = realpath(path, NULL);
    if (!real)
        return trail_set_error(err, errno == ENOMEM ? HRT_E_NOMEM : HRT_E_IO, "%scannot find '%s': %s", who, path,
                               strerror(errno));
    struct stat st;
    int rc = HRT_OK;
    if (stat(real, &st) != 0)
        rc = trail_set_error(err, HRT_E_IO, "%scannot read '%s': %s", who, path, strerror(errno));
    else if (!S_ISREG(st.st_mode))
        rc = trail_set_error(err, HRT_E_IO, "%s'%s' is %s; the file is replaced whole (written, then renamed): name a "
                             "regular file", who, path, trail_kind(st.st_mode));
    if (rc != HRT_OK) {
        free(real);
        return rc;
    }
    *target = real;
    *mode = (unsigned)(st.st_mode & 07777);
    return HRT_OK;
}

int trail_temp_beside(const char *path, const char *who, char **tmp, int *fd, hrt_error *err)
{
    size_t len = strlen(path);
    *fd = -1;
    if (!(*tmp = malloc(len + 16)))
        return trail_set_error(err, HRT_E_NOMEM, "%sout of memory", who);
    snprintf(*tmp, len + 16, "%s.tmp-XXXXXX", path);
    if ((*fd = mkstemp(*tmp)) < 0) {
        int rc = trail_set_error(err, HRT_E_IO, "%scannot create a temporary file beside '%s': %s", who, path,
                                 strerror(errno));
        free(*tmp);
        *tmp = NULL;
        return rc;
    }
    return HRT_OK;
}

int trail_write_replace(const char *target, const char *who, const void *bytes, size_t n, unsigned mode,
                        hrt_error *err)
{
    char *tmp = NULL;
    int fd = -1;
    int rc = trail_temp_beside(target, who, &tmp, &fd, err);
    if (rc != HRT_OK)
        return rc;
    if (fchmod(fd, (mode_t)mode) != 0)
        rc = trail_set_error(err, HRT_E_IO, "%scannot set the mode of '%s': %s", who, tmp, strerror(errno));
    for (size_t done = 0; rc == HRT_OK && done < n;) {
        ssize_t k = write(fd, (const char *)bytes + done, n - done);
        if (k < 0 && errno == EINTR)
            continue;
        if (k <= 0)
            rc = trail_set_error(err, HRT_E_IO, "%scannot write '%s' (%zu of %zu bytes written): %s", who, tmp, done, n,
                                 k < 0 ? strerror(errno) : "no progress");
        else
            done += (size_t)k;
    }
    if (rc == HRT_OK && fsync(fd) != 0)
        rc = trail_set_error(err, HRT_E_IO, "%scannot write '%s' to the disk: %s", who, tmp, strerror(errno));
    if (close(fd) != 0 && rc == HRT_OK)
        rc = trail_set_error(err, HRT_E_IO, "%scannot finish writing '%s': %s", who, tmp, strerror(errno));
    if (rc == HRT_OK && rename(tmp, target) != 0)
        rc = trail_set_error(err, HRT_E_IO, "%scannot rename '%s' to '%s': %s", who, tmp, target, strerror(errno));
    if (rc != HRT_OK)
        unlink(tmp);
    free(tmp);
    return rc;
}
