/* A progress line on stderr for a person at a terminal. */
#include <stdio.h>
#include <time.h>
#include <unistd.h>

#include "lopside/util/progress.h"

/* Work shorter than this shows no progress at all. */
#define QUIET_SECONDS 1.0
/* The line is redrawn at most this often. */
#define REDRAW_SECONDS 0.1

void lop_progress_step(const lop_progress *progress, const char *what, size_t done,
                       size_t total)
{
    if (progress && progress->report)
        progress->report(progress->ctx, what, done, total);
}

static double now(void)
{
    struct timespec t;
    clock_gettime(CLOCK_MONOTONIC, &t);
    return (double)t.tv_sec + 1e-9 * (double)t.tv_nsec;
}

static void draw(void *ctx, const char *what, size_t done, size_t total)
{
    lop_progress_line *line = ctx;
    double t = now();
    if (done <= 1 && !line->shown)
        line->started = t;
    if (done >= total) {
        if (line->shown)
            fputs("\r\033[K", stderr);
        line->shown = 0;
        line->started = t;
        return;
    }
    if (t - line->started < QUIET_SECONDS || t - line->drawn < REDRAW_SECONDS)
        return;
    fprintf(stderr, "\r\033[Klopside: %s: %zu of %zu", what, done, total);
    fflush(stderr);
    line->drawn = t;
    line->shown = 1;
}

lop_progress lop_progress_stderr(lop_progress_line *line)
{
    lop_progress none = {NULL, NULL}, shown = {draw, line};
    return isatty(STDERR_FILENO) ? shown : none;
}
