/* Progress of long work (sweeps, designs, value of information). The engine reports
 * through a callback and does no I/O itself; lop_progress_stderr draws it. */
#ifndef LOPSIDE_PROGRESS_H
#define LOPSIDE_PROGRESS_H

#include <stddef.h>

typedef struct {
    /* Called with the work's name (e.g. "sweep penalty"), the steps done and the total;
     * done == total once at the end. */
    void (*report)(void *ctx, const char *what, size_t done, size_t total);
    void *ctx;
} lop_progress;

/* Passes one step of work to progress (NULL, or one without a callback: nothing). */
void lop_progress_step(const lop_progress *progress, const char *what, size_t done,
                       size_t total);

/* The state of one progress line on stderr; the caller owns it, zeroed. */
typedef struct {
    double started, drawn;
    int shown;
} lop_progress_line;

/* Returns a progress that redraws one line on stderr (keeping its state in line) when
 * stderr is a terminal and the work has run for more than a second, and one that
 * does nothing otherwise. */
lop_progress lop_progress_stderr(lop_progress_line *line);

#endif
