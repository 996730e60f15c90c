/* Re-building a problem's model at a point of a sweep or design, with errors that say
 * which point made the problem invalid. */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "lopside/input/path.h"
#include "lopside/model/study.h"
#include "lopside/util/strutil.h"

double lop_study_axis(double from, double to, size_t n, size_t i)
{
    if (n < 2 || i == 0)
        return from;
    if (i + 1 == n)
        return to;
    return from + (to - from) * (double)i / (double)(n - 1);
}

lop_problem *lop_study_model_at(lop_config *cfg, const lop_path *paths,
                                const double *values, size_t n, const char *where,
                                const lop_path_site *site, lop_error *err)
{
    char settings[256] = "";
    size_t used = 0;
    for (size_t k = 0; k < n; k++) {
        char number[LOP_NUMBER_MAX];
        lop_shortest_number(values[k], number, sizeof number);
        if (lop_path_set(cfg, &paths[k], number, site, err) != LOP_OK)
            return NULL;
        char text[2 * LOP_PATH_PART + 32];
        int w = snprintf(settings + used, sizeof settings - used, "%s%s = %s",
                         k ? ", " : "", lop_path_text(&paths[k], text, sizeof text), number);
        if (w > 0 && (size_t)w < sizeof settings - used)
            used += (size_t)w;
    }
    lop_error inner = {0};
    lop_problem *model = lop_problem_build_model(cfg, &inner);
    if (model)
        return model;
    if (inner.status != LOP_EINPUT) {
        *err = inner;
        return NULL;
    }
    char line[32] = "";
    if (inner.line > 0 && inner.line != site->line)
        snprintf(line, sizeof line, "line %d: ", inner.line);
    lop_error_input(err, cfg->path, site->line, site->section, site->key,
                    "%s (%s) makes the problem invalid: %s%s%s%s%s%s%s", settings, where, line,
                    inner.section[0] ? "[" : "", inner.section, inner.section[0] ? "] " : "",
                    inner.key, inner.key[0] ? ": " : "", inner.message);
    return NULL;
}
