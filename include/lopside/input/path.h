/* Paths name one number (or one key) of a problem file: `section.key` or
 * `section.key[i]` (1-based), e.g. `payoff.report_yes[2]`, `evidence.swab.sd`. The
 * section part is matched against the sections present, longest match first. Sweeps,
 * designs and believed rules change a problem through paths and re-build it. */
#ifndef LOPSIDE_PATH_H
#define LOPSIDE_PATH_H

#include "lopside/input/config.h"
#include "lopside/util/error.h"

/* Returns LOP_OK after setting what path names in cfg to value (a whole key, or the
 * i-th entry of its list); an input error at `line` (of the entry that gave the path,
 * in section `where`) when the path names nothing. */
lop_status lop_path_set(lop_config *cfg, const char *path, const char *value,
                        const char *where, int line, lop_error *err);

/* Returns the last part of a path, to name an axis briefly: "say_yes[1]" of
 * "payoff.say_yes[1]" (a pointer into path). */
const char *lop_path_key(const char *path);

#endif
