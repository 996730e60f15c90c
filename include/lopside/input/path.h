/* Paths name one number (or one key) of a problem file: `section.key` or
 * `section.key[i]` (1-based), e.g. `payoff.report_yes[2]`, `evidence.swab.sd`. The
 * section part is matched against the sections present, longest match first. A path is
 * parsed once (lop_path_parse) and then used by sweeps, designs, believed rules and the
 * writers' labels; changing a problem through it re-builds the problem. */
#ifndef LOPSIDE_PATH_H
#define LOPSIDE_PATH_H

#include <stddef.h>

#include "lopside/input/config.h"
#include "lopside/util/error.h"

#define LOP_PATH_PART 128

/* A parsed path: always names a section of the file it was parsed against. */
typedef struct {
    char section[LOP_PATH_PART];
    char key[LOP_PATH_PART];
    size_t index;            /* 1-based entry of the key's list; 0: the whole key */
} lop_path;

/* Where a path was given, for its errors: the section and key of that entry and its
 * line (e.g. [sweep.penalty] x, line 12). */
typedef struct {
    const char *section;
    const char *key;
    int line;
} lop_path_site;

/* Returns LOP_OK after parsing text into *out against the sections of cfg; an input
 * error at site (naming the path and the nearest section or key of the file) when it
 * names no section, no key, or has a malformed index. */
lop_status lop_path_parse(const lop_config *cfg, const char *text, const lop_path_site *site,
                          lop_path *out, lop_error *err);

/* Returns LOP_OK after setting what path names in cfg to value (a whole key, or the
 * index-th entry of its list); an input error at site when that entry does not exist. */
lop_status lop_path_set(lop_config *cfg, const lop_path *path, const char *value,
                        const lop_path_site *site, lop_error *err);

/* Returns buf holding the path's last part, to name an axis briefly: "say_yes[1]" of
 * "payoff.say_yes[1]". */
const char *lop_path_label(const lop_path *path, char *buf, size_t size);

/* Returns buf holding the whole path as written: "payoff.say_yes[1]". */
const char *lop_path_text(const lop_path *path, char *buf, size_t size);

#endif
