/* What sweeps, designs and the value of information share: re-building the model of a
 * problem with some of its numbers changed (paths), and naming the point in errors. */
#ifndef LOPSIDE_STUDY_H
#define LOPSIDE_STUDY_H

#include <stddef.h>

#include "lopside/input/config.h"
#include "lopside/input/path.h"
#include "lopside/util/error.h"
#include "lopside/model/problem.h"

/* Returns the i-th of n evenly spaced values from `from` to `to` (both included). */
double lop_study_axis(double from, double to, size_t n, size_t i);

/* Returns the model (lop_problem_build_model) of cfg after setting paths[k] to values[k]
 * for every k < n; cfg is the caller's scratch copy of the problem's source, and a later
 * call overwrites what an earlier one set. NULL with err set: an input error at `site`
 * that names each path and value, `where` (e.g. "point 3 of 21"), and the re-built
 * problem's own complaint; a run error when memory runs out. */
lop_problem *lop_study_model_at(lop_config *cfg, const lop_path *paths,
                                const double *values, size_t n, const char *where,
                                const lop_path_site *site, lop_error *err);

#endif
