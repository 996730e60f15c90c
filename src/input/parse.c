#include <ctype.h>
#include <errno.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "lopside/input/parse.h"
#include "lopside/util/strutil.h"

static lop_status fail(const lop_config *cfg, const lop_entry *e, lop_error *err,
                       const char *what, const char *text)
{
    return lop_error_input(err, cfg->path, e->line, e->section, e->key,
                           "expected %s, found `%s`", what, text);
}

/* Returns true and the number when text is a whole decimal number (C locale). */
static bool read_double(const char *text, bool allow_inf, double *out)
{
    if (allow_inf && (strcmp(text, "inf") == 0 || strcmp(text, "-inf") == 0)) {
        *out = text[0] == '-' ? -INFINITY : INFINITY;
        return true;
    }
    /* strtod also takes hex, nan and inf spellings: allow plain decimals only. */
    for (const char *p = text; *p; p++)
        if (!isdigit((unsigned char)*p) && !strchr("+-.eE", *p))
            return false;
    char *end = NULL;
    errno = 0;
    double v = strtod(text, &end);
    /* Underflow (1e-400) reads as the nearest double; overflow is an error. */
    if (end == text || *end != '\0' || !isfinite(v) || (errno == ERANGE && fabs(v) > 1))
        return false;
    *out = v;
    return true;
}

lop_status lop_parse_list(const lop_config *cfg, const lop_entry *e, lop_list *out,
                          lop_error *err)
{
    out->items = NULL;
    out->lines = NULL;
    out->n = 0;
    const char *p = e->value;
    for (;;) {
        size_t len = strcspn(p, ",\n");
        char *item = lop_strndup_trim(p, len);
        char **grown = item ? realloc(out->items, (out->n + 1) * sizeof *grown) : NULL;
        if (!grown) {
            free(item);
            lop_list_free(out);
            return lop_error_run(err, "out of memory");
        }
        out->items = grown;
        out->items[out->n++] = item;
        int *lines = realloc(out->lines, out->n * sizeof *lines);
        if (!lines) {
            lop_list_free(out);
            return lop_error_run(err, "out of memory");
        }
        out->lines = lines;
        lines[out->n - 1] = lop_entry_line_at(e, (size_t)(p - e->value));
        if (item[0] == '\0') {
            /* A comma at the end of a line before a continuation is allowed. */
            bool before_continuation = p[len] == '\n' && p > e->value && p[-1] == ',';
            bool whole_empty = out->n == 1 && p[len] == '\0';
            free(out->items[--out->n]);
            if (!before_continuation) {
                lop_list_free(out);
                return lop_error_input(err, cfg->path, lop_entry_line_at(e, (size_t)(p - e->value)),
                                       e->section, e->key, whole_empty ? "the value is empty"
                                                   : "an empty entry in the list (two commas "
                                                     "in a row, or a comma at the end)");
            }
        }
        if (p[len] == '\0')
            break;
        p += len + 1;
    }
    return LOP_OK;
}

lop_status lop_parse_number(const lop_config *cfg, const lop_entry *e, bool allow_inf,
                            double *out, lop_error *err)
{
    if (strchr(e->value, ',') || strchr(e->value, '\n'))
        return lop_error_input(err, cfg->path, e->line, e->section, e->key,
                               "expected one number, found a list `%s`", e->value);
    if (e->value[0] == '\0')
        return lop_error_input(err, cfg->path, e->line, e->section, e->key,
                               "the value is empty: expected a number");
    if (!read_double(e->value, allow_inf, out))
        return fail(cfg, e, err, allow_inf ? "a number (or inf, -inf)" : "a finite number",
                    e->value);
    return LOP_OK;
}

lop_status lop_parse_count(const lop_config *cfg, const lop_entry *e, size_t min,
                           size_t max, size_t *out, lop_error *err)
{
    double v;
    if (lop_parse_number(cfg, e, false, &v, err) != LOP_OK)
        return LOP_EINPUT;
    if (v != floor(v) || v < (double)min || v > (double)max)
        return lop_error_input(err, cfg->path, e->line, e->section, e->key,
                               "expected a whole number from %zu to %zu, found `%s`", min,
                               max, e->value);
    *out = (size_t)v;
    return LOP_OK;
}

lop_status lop_parse_numbers(const lop_config *cfg, const lop_entry *e, double **out,
                             size_t *n, lop_error *err)
{
    lop_list list;
    if (lop_parse_list(cfg, e, &list, err) != LOP_OK)
        return err->status;
    double *v = malloc((list.n ? list.n : 1) * sizeof *v);
    if (!v) {
        lop_list_free(&list);
        return lop_error_run(err, "out of memory");
    }
    for (size_t i = 0; i < list.n; i++) {
        if (!read_double(list.items[i], false, &v[i])) {
            lop_error_input(err, cfg->path, list.lines[i], e->section, e->key,
                            "entry %zu: expected a finite number, found `%s`", i + 1,
                            list.items[i]);
            free(v);
            lop_list_free(&list);
            return LOP_EINPUT;
        }
    }
    *out = v;
    *n = list.n;
    lop_list_free(&list);
    return LOP_OK;
}

static bool label_chars_ok(const char *s)
{
    if (!isalpha((unsigned char)s[0]) && s[0] != '_')
        return false;
    for (; *s; s++)
        if (!isalnum((unsigned char)*s) && *s != '_' && *s != '-')
            return false;
    return true;
}

lop_status lop_parse_labels(const lop_config *cfg, const lop_entry *e, lop_list *out,
                            lop_error *err)
{
    if (lop_parse_list(cfg, e, out, err) != LOP_OK)
        return err->status;
    for (size_t i = 0; i < out->n; i++) {
        if (!label_chars_ok(out->items[i])) {
            lop_error_input(err, cfg->path, out->lines[i], e->section, e->key,
                            "label `%s` must start with a letter and hold only letters, "
                            "digits, _ and -",
                            out->items[i]);
            lop_list_free(out);
            return LOP_EINPUT;
        }
        for (size_t j = 0; j < i; j++) {
            if (strcmp(out->items[i], out->items[j]) == 0) {
                lop_error_input(err, cfg->path, out->lines[i], e->section, e->key,
                                "duplicate label `%s` (entries %zu and %zu)", out->items[i],
                                j + 1, i + 1);
                lop_list_free(out);
                return LOP_EINPUT;
            }
        }
    }
    return LOP_OK;
}

lop_status lop_parse_per_state(const lop_config *cfg, const lop_entry *e, size_t want,
                               const char *what, double **out, lop_error *err)
{
    double *v;
    size_t n;
    if (lop_parse_numbers(cfg, e, &v, &n, err) != LOP_OK)
        return err->status;
    if (n != 1 && n != want) {
        free(v);
        return lop_error_input(err, cfg->path, e->line, e->section, e->key,
                               "expected one %s for all states or one per state (%zu), "
                               "found %zu",
                               what, want, n);
    }
    if (n == 1 && want > 1) {
        double *all = malloc(want * sizeof *all);
        if (!all) {
            free(v);
            return lop_error_run(err, "out of memory");
        }
        for (size_t i = 0; i < want; i++)
            all[i] = v[0];
        free(v);
        v = all;
    }
    *out = v;
    return LOP_OK;
}

int lop_entry_item_line(const lop_entry *e, size_t index)
{
    /* Items as lop_parse_list splits them: an empty item between a comma and a
     * continuation is no item. */
    const char *p = e->value;
    size_t seen = 0;
    for (;;) {
        size_t len = strcspn(p, ",\n");
        size_t lead = 0;
        while (lead < len && (p[lead] == ' ' || p[lead] == '\t'))
            lead++;
        bool empty = lead == len;
        if (!empty && seen++ == index)
            return lop_entry_line_at(e, (size_t)(p - e->value));
        if (p[len] == '\0')
            return e->line;
        p += len + 1;
    }
}

long lop_list_index(const lop_list *list, const char *label)
{
    for (size_t i = 0; i < list->n; i++)
        if (strcmp(list->items[i], label) == 0)
            return (long)i;
    return -1;
}

void lop_list_free(lop_list *list)
{
    for (size_t i = 0; i < list->n; i++)
        free(list->items[i]);
    free(list->items);
    free(list->lines);
    list->items = NULL;
    list->lines = NULL;
    list->n = 0;
}
