/* Errors as values: every failure is described once, where it is found, and
 * printed only by main as `lopside: FILE:LINE: [section] key: message`. */
#ifndef LOPSIDE_ERROR_H
#define LOPSIDE_ERROR_H

#include <stdbool.h>
#include <stddef.h>

#define LOP_ERROR_TEXT 512

/* Why a run stopped: bad input (exit 2) or a failure while running (exit 1). */
typedef enum { LOP_OK = 0, LOP_EINPUT = 2, LOP_ERUN = 1 } lop_status;

typedef struct {
    lop_status status;
    char file[256];
    int line;                 /* 0 when the problem is not on one line */
    char section[96];
    char key[96];
    char message[LOP_ERROR_TEXT];
} lop_error;

/* Returns LOP_EINPUT after filling err; the first error set wins. */
lop_status lop_error_input(lop_error *err, const char *file, int line,
                           const char *section, const char *key,
                           const char *fmt, ...)
    __attribute__((format(printf, 6, 7)));

/* Returns LOP_ERUN after filling err (no file position); the first error set wins. */
lop_status lop_error_run(lop_error *err, const char *fmt, ...)
    __attribute__((format(printf, 2, 3)));

/* Returns true when err holds an error. */
bool lop_error_is_set(const lop_error *err);

/* Returns the number of bytes written to buf: the one-line form of err. */
int lop_error_format(const lop_error *err, char *buf, size_t size);

#endif
