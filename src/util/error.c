#include <stdarg.h>
#include <stdio.h>
#include <string.h>

#include "lopside/util/error.h"

static void copy_field(char *dst, size_t size, const char *src)
{
    snprintf(dst, size, "%s", src ? src : "");
}

lop_status lop_error_input(lop_error *err, const char *file, int line,
                           const char *section, const char *key,
                           const char *fmt, ...)
{
    if (err->status != LOP_OK)
        return LOP_EINPUT;
    err->status = LOP_EINPUT;
    copy_field(err->file, sizeof err->file, file);
    err->line = line;
    copy_field(err->section, sizeof err->section, section);
    copy_field(err->key, sizeof err->key, key);
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(err->message, sizeof err->message, fmt, ap);
    va_end(ap);
    return LOP_EINPUT;
}

lop_status lop_error_run(lop_error *err, const char *fmt, ...)
{
    if (err->status != LOP_OK)
        return LOP_ERUN;
    memset(err, 0, sizeof *err);
    err->status = LOP_ERUN;
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(err->message, sizeof err->message, fmt, ap);
    va_end(ap);
    return LOP_ERUN;
}

bool lop_error_is_set(const lop_error *err)
{
    return err->status != LOP_OK;
}

int lop_error_format(const lop_error *err, char *buf, size_t size)
{
    int n = 0;
    size_t used = 0;
#define APPEND(...)                                                          \
    do {                                                                     \
        n = snprintf(buf + used, used < size ? size - used : 0, __VA_ARGS__); \
        used += n > 0 ? (size_t)n : 0;                                       \
    } while (0)
    if (err->file[0])
        APPEND(err->line > 0 ? "%s:%d: " : "%s: ", err->file, err->line);
    if (err->section[0])
        APPEND("[%s] ", err->section);
    if (err->key[0])
        APPEND("%s: ", err->key);
    APPEND("%s", err->message);
#undef APPEND
    return (int)used;
}
