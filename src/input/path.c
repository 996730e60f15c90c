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

lop_status lop_path_set(lop_config *cfg, const char *path, const char *value,
                        const char *where, int line, lop_error *err)
{
    char near[256];
    const lop_section *sec = match_section(cfg, path);
    if (!sec) {
        suggest_section(cfg, path, near, sizeof near);
        return lop_error_input(err, cfg->path, line, where, path,
                               "the path names no section of the file (a path is "
                               "`section.key` or `section.key[i]`)%s%s%s",
                               near[0] ? "; did you mean `" : "", near, near[0] ? "`?" : "");
    }
    char key[128];
    const char *k = path + strlen(sec->name) + 1;
    size_t klen = strcspn(k, "[");
    snprintf(key, sizeof key, "%.*s", (int)klen, k);
    long index = 0;
    if (k[klen] == '[') {
        char *end;
        index = strtol(k + klen + 1, &end, 10);
        if (index < 1 || end[0] != ']' || end[1] != '\0')
            return lop_error_input(err, cfg->path, line, where, path,
                                   "expected `key[i]` with i a whole number from 1");
    }
    if (key[0] == '\0')
        return lop_error_input(err, cfg->path, line, where, path, "the path names no key");
    const lop_entry *e = lop_config_find(cfg, sec->name, key);
    if (!index)
        return lop_config_set(cfg, sec->name, key, value, line) == 0
                   ? LOP_OK
                   : lop_error_run(err, "out of memory");
    if (!e) {
        suggest_key(cfg, sec->name, key, k + klen, near, sizeof near);
        return lop_error_input(err, cfg->path, line, where, path,
                               "[%s] has no key `%s` to take entry %ld of%s%s%s", sec->name,
                               key, index, near[0] ? "; did you mean `" : "", near,
                               near[0] ? "`?" : "");
    }
    lop_list list;
    if (lop_parse_list(cfg, e, &list, err) != LOP_OK)
        return err->status;
    if ((size_t)index > list.n) {
        size_t n = list.n;
        lop_list_free(&list);
        return lop_error_input(err, cfg->path, line, where, path,
                               "[%s] %s has %zu entries, not %ld", sec->name, key, n, index);
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
        strcat(joined, (long)i + 1 == index ? value : list.items[i]);
    }
    lop_list_free(&list);
    int rc = lop_config_set(cfg, sec->name, key, joined, e->line);
    free(joined);
    return rc == 0 ? LOP_OK : lop_error_run(err, "out of memory");
}

const char *lop_path_key(const char *path)
{
    const char *bracket = strchr(path, '[');
    const char *dot = NULL;
    for (const char *c = path; *c && (!bracket || c < bracket); c++)
        if (*c == '.')
            dot = c;
    return dot ? dot + 1 : path;
}
