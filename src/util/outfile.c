#include <errno.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include "lopside/util/outfile.h"
#include "lopside/util/strutil.h"

lop_status lop_outfile_open(lop_outfile *out, const char *path, lop_error *err)
{
    memset(out, 0, sizeof *out);
    size_t n = strlen(path) + sizeof ".tmp-XXXXXX";
    out->path = lop_strdup(path);
    out->tmp_path = malloc(n);
    if (!out->path || !out->tmp_path) {
        lop_outfile_abandon(out);
        return lop_error_run(err, "out of memory");
    }
    snprintf(out->tmp_path, n, "%s.tmp-XXXXXX", path);
    int fd = mkstemp(out->tmp_path);
    if (fd < 0) {
        int e = errno;
        free(out->tmp_path);
        out->tmp_path = NULL;
        lop_outfile_abandon(out);
        return lop_error_run(err, "cannot write %s: %s", path, strerror(e));
    }
    /* mkstemp makes the file private (0600); give it the mode a new file would get. */
    mode_t mask = umask(0);
    umask(mask);
    if (fchmod(fd, 0666 & ~mask) != 0) {
        int e = errno;
        close(fd);
        lop_outfile_abandon(out);
        return lop_error_run(err, "cannot write %s: %s", path, strerror(e));
    }
    out->file = fdopen(fd, "w");
    if (!out->file) {
        int e = errno;
        close(fd);
        lop_outfile_abandon(out);
        return lop_error_run(err, "cannot write %s: %s", path, strerror(e));
    }
    return LOP_OK;
}

lop_status lop_outfile_finish(lop_outfile *out, lop_error *err)
{
    if (!out->file)
        return LOP_OK;
    int failed = ferror(out->file) || fflush(out->file) != 0 || fsync(fileno(out->file)) != 0;
    int e = errno;
    failed |= fclose(out->file) != 0;
    if (!e)
        e = errno;
    out->file = NULL;
    if (failed) {
        lop_error_run(err, "cannot write %s: %s", out->path, strerror(e ? e : EIO));
        lop_outfile_abandon(out);
        return LOP_ERUN;
    }
    return LOP_OK;
}

lop_status lop_outfile_commit(lop_outfile *out, lop_error *err)
{
    if (lop_outfile_finish(out, err) != LOP_OK)
        return LOP_ERUN;
    if (rename(out->tmp_path, out->path) != 0) {
        lop_error_run(err, "cannot write %s: %s", out->path, strerror(errno));
        lop_outfile_abandon(out);
        return LOP_ERUN;
    }
    free(out->tmp_path);
    out->tmp_path = NULL;
    lop_outfile_abandon(out);
    return LOP_OK;
}

void lop_outfile_abandon(lop_outfile *out)
{
    if (out->file)
        fclose(out->file);
    if (out->tmp_path)
        remove(out->tmp_path);
    free(out->tmp_path);
    free(out->path);
    memset(out, 0, sizeof *out);
}

lop_status lop_outfile_defer(lop_outfile_list *list, lop_outfile *out, lop_error *err)
{
    if (lop_outfile_finish(out, err) != LOP_OK)
        return LOP_ERUN;
    lop_outfile *grown = realloc(list->items, (list->n + 1) * sizeof *grown);
    if (!grown) {
        lop_outfile_abandon(out);
        return lop_error_run(err, "out of memory");
    }
    list->items = grown;
    grown[list->n++] = *out;
    memset(out, 0, sizeof *out);
    return LOP_OK;
}

lop_status lop_outfile_commit_all(lop_outfile_list *list, lop_error *err)
{
    lop_status st = LOP_OK;
    for (size_t i = 0; i < list->n; i++) {
        if (st == LOP_OK)
            st = lop_outfile_commit(&list->items[i], err);
        else
            lop_outfile_abandon(&list->items[i]);
    }
    free(list->items);
    list->items = NULL;
    list->n = 0;
    return st;
}

void lop_outfile_abandon_all(lop_outfile_list *list)
{
    for (size_t i = 0; i < list->n; i++)
        lop_outfile_abandon(&list->items[i]);
    free(list->items);
    list->items = NULL;
    list->n = 0;
}
