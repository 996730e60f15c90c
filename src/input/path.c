#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "lopside/input/parse.h"
#include "lopside/input/path.h"
#include "lopside/util/strutil.h"

/* The longest section name present that path starts with, followed by a dot. */
static const lop_section *match_section(const lop_config *cfg, const char *path)
{
    const lop_section *best = NULL;
    for (size_t i = 0; i < cfg->n_sections; i++) {
        const char *name = cfg->sections[i].name;
        size_t n = strlen(name);
        if (strncmp(path, name, n) == 0 && path[n] == '.' &&
            (!best || n > strlen(best->name)))
            best = &cfg->sections[i];
    }
    return best;
}

/* Writes to buf the path with its section part replaced by the nearest section of the
 * file, or "" when none is near: a head of the path up to one of its dots (before any
 * `[`) is compared with the sections of as many parts, shortest head first. */
static void suggest_section(const lop_config *cfg, const char *path, char *buf, size_t size)
{
    buf[0] = '\0';
    char **names = malloc((cfg->n_sections + 1) * sizeof *names);
    if (!names)
        return;
    size_t end = strcspn(path, "["), dots = 0;
    for (size_t at = 0; at < end && !buf[0]; at++) {
        if (path[at] != '.')
            continue;
        size_t n = 0;
        for (size_t i = 0; i < cfg->n_sections; i++) {
            size_t d = 0;
            for (const char *c = cfg->sections[i].name; *c; c++)
                d += *c == '.';
            if (d == dots)
                names[n++] = cfg->sections[i].name;
        }
        dots++;
        char head[128];
        snprintf(head, sizeof head, "%.*s", (int)at, path);
        const char *near = lop_nearest(head, names, n);
        if (near)
            snprintf(buf, size, "%s%s", near, path + at);
    }
    free(names);
}

/* Writes to buf the path with its key replaced by the nearest key that section sec of
 * the file gives, or "" when none is near. */
static void suggest_key(const lop_config *cfg, const char *sec, const char *key,
                        const char *rest, char *buf, size_t size)
{
    buf[0] = '\0';
    char **keys = malloc((cfg->n_entries + 1) * sizeof *keys);
    if (!keys)
        return;
    size_t n = 0;
    for (size_t i = 0; i < cfg->n_entries; i++)
        if (strcmp(cfg->entries[i].section, sec) == 0)
            keys[n++] = cfg->entries[i].key;
    const char *near = lop_nearest(key, keys, n);
    if (near)
        snprintf(buf, size, "%s.%s%s", sec, near, rest);
    free(keys);
}

/* Reports an input error about path text at site; the key of the error is the site's
 * key, so a sweep's error reads "[sweep.penalty] x: the path `...` ...". */
static lop_status path_error(const lop_config *cfg, const lop_path_site *site, const char *text,
                             lop_error *err, const char *what, const char *near)
{
    return lop_error_input(err, cfg->path, site->line, site->section, site->key,
                           "the path `%s` %s%s%s%s", text, what, near[0] ? "; did you mean `" : "",
                           near, near[0] ? "`?" : "");
}

lop_status lop_path_parse(const lop_config *cfg, const char *text, const lop_path_site *site,
                          lop_path *out, lop_error *err)
{
    char near[256] = "";
    const lop_section *sec = match_section(cfg, text);
    if (!sec) {
        suggest_section(cfg, text, near, sizeof near);
        return path_error(cfg, site, text, err,
                          "names no section of the file (a path is `section.key` or "
                          "`section.key[i]`)", near);
    }
    const char *k = text + strlen(sec->name) + 1;
    size_t klen = strcspn(k, "[");
    if (klen == 0)
        return path_error(cfg, site, text, err, "names no key", near);
    if (klen >= LOP_PATH_PART || strlen(sec->name) >= LOP_PATH_PART)
        return path_error(cfg, site, text, err, "is too long", near);
    snprintf(out->section, sizeof out->section, "%s", sec->name);
    snprintf(out->key, sizeof out->key, "%.*s", (int)klen, k);
    out->index = 0;
    if (k[klen] == '[') {
        /* digits only: no sign, no spaces */
        const char *digits = k + klen + 1;
        size_t nd = strspn(digits, "0123456789");
        long index = nd ? strtol(digits, NULL, 10) : 0;
        if (nd == 0 || nd > 9 || index < 1 || strcmp(digits + nd, "]") != 0)
            return path_error(cfg, site, text, err,
                              "is not `key[i]` with i a whole number from 1", near);
        out->index = (size_t)index;
        if (!lop_config_find(cfg, out->section, out->key)) {
            suggest_key(cfg, out->section, out->key, k + klen, near, sizeof near);
            char what[LOP_PATH_PART * 2 + 64];
            snprintf(what, sizeof what, "names no entry: [%s] has no key `%s`", out->section,
                     out->key);
            return path_error(cfg, site, text, err, what, near);
        }
    }
    return LOP_OK;
}

const char *lop_path_label(const lop_path *path, char *buf, size_t size)
{
    if (path->index)
        snprintf(buf, size, "%s[%zu]", path->key, path->index);
    else
        snprintf(buf, size, "%s", path->key);
    return buf;
}

const char *lop_path_text(const lop_path *path, char *buf, size_t size)
{
    char label[LOP_PATH_PART + 24];
    snprintf(buf, size, "%s.%s", path->section, lop_path_label(path, label, sizeof label));
    return buf;
}

lop_status lop_path_set(lop_config *cfg, const lop_path *path, const char *value,
                        const lop_path_site *site, lop_error *err)
{
    const char *sec = path->section, *key = path->key;
    if (!path->index)
        return lop_config_set(cfg, sec, key, value, site->line) == 0
                   ? LOP_OK
                   : lop_error_run(err, "out of memory");
    const lop_entry *e = lop_config_find(cfg, sec, key);
    char text[LOP_PATH_PART * 2 + 32];
    lop_path_text(path, text, sizeof text);
    if (!e)
        return path_error(cfg, site, text, err, "names no entry", "");
    lop_list list;
    if (lop_parse_list(cfg, e, &list, err) != LOP_OK)
        return err->status;
    size_t index = path->index;
    if (index > list.n) {
        size_t n = list.n;
        lop_list_free(&list);
        char what[3 * LOP_PATH_PART + 96];
        snprintf(what, sizeof what, "names entry %zu, but [%s] %s has %zu %s", index, sec, key,
                 n, n == 1 ? "entry" : "entries");
        return path_error(cfg, site, text, err, what, "");
    }
    size_t total = strlen(value) + 1;
    for (size_t i = 0; i < list.n; i++)
        total += strlen(list.items[i]) + 2;
    char *joined = malloc(total);
    if (!joined) {
        lop_list_free(&list);
        return lop_error_run(err, "out of memory");
    }
    joined[0] = '\0';
    for (size_t i = 0; i < list.n; i++) {
        if (i)
            strcat(joined, ", ");
        strcat(joined, i + 1 == index ? value : list.items[i]);
    }
    lop_list_free(&list);
    int rc = lop_config_set(cfg, sec, key, joined, e->line);
    free(joined);
    return rc == 0 ? LOP_OK : lop_error_run(err, "out of memory");
}
