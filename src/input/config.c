#include <errno.h>
#include <ini.h>
#include <stdbool.h>
#include <stdlib.h>
#include <string.h>

#include "lopside/input/config.h"
#include "lopside/util/strutil.h"

/* The reader hands inih one physical line at a time from memory and remembers
 * what inih cannot tell its handler: the line number, whether the line began
 * with white space (an INI continuation), and where each section header is. It also
 * does what the packaged inih leaves undone: comment lines of any length, `;`
 * comments on continuation lines, and rejecting `key: value` and indented keys. */
typedef struct {
    lop_config *cfg;
    lop_error *err;
    const char *pos, *end;
    int line;
    bool indented;
    bool after_key;      /* an indented line here continues the last key (inih's rule) */
    bool out_of_memory;
} reader_state;

#define UTF8_BOM "\xef\xbb\xbf"

/* Cuts a `;` comment that follows white space (inih does so except on continuations). */
static void cut_inline_comment(char *text)
{
    for (char *c = text; *c; c++)
        if (*c == ';' && c > text && (c[-1] == ' ' || c[-1] == '\t')) {
            *c = '\0';
            return;
        }
}

static bool record_section(reader_state *st, const char *s)
{
    const char *close = strchr(s, ']');
    if (!close)
        return true;
    char *name = lop_strndup_trim(s + 1, (size_t)(close - s - 1));
    lop_section *grown =
        name ? realloc(st->cfg->sections, (st->cfg->n_sections + 1) * sizeof *grown) : NULL;
    if (!grown) {
        free(name);
        st->out_of_memory = true;
        return false;
    }
    st->cfg->sections = grown;
    grown[st->cfg->n_sections++] = (lop_section){name, st->line};
    return true;
}

static char *read_line(char *str, int num, void *stream)
{
    reader_state *st = stream;
    if (lop_error_is_set(st->err) || st->out_of_memory || st->pos >= st->end)
        return NULL;
    const char *nl = memchr(st->pos, '\n', (size_t)(st->end - st->pos));
    size_t len = nl ? (size_t)(nl - st->pos) + 1 : (size_t)(st->end - st->pos);
    const char *text = st->pos;
    st->pos += len;
    st->line++;
    size_t content = len - (nl ? 1 : 0);
    if (content > 0 && text[content - 1] == '\r')
        content--;
    if (st->line == 1 && content >= 3 && memcmp(text, UTF8_BOM, 3) == 0) {
        text += 3;
        content -= 3;
    }
    if (memchr(text, '\0', content)) {
        lop_error_input(st->err, st->cfg->path, st->line, NULL, NULL,
                        "holds a NUL byte: a problem file is UTF-8 text");
        return NULL;
    }
    if (!lop_utf8_valid(text, content)) {
        lop_error_input(st->err, st->cfg->path, st->line, NULL, NULL,
                        "is not valid UTF-8 text");
        return NULL;
    }
    size_t lead = 0;
    while (lead < content && (text[lead] == ' ' || text[lead] == '\t'))
        lead++;
    /* Blank and comment lines may be any length: inih only needs to skip them. */
    if (lead == content || text[lead] == ';' || text[lead] == '#') {
        strcpy(str, "\n");
        return str;
    }
    if (content + 2 > (size_t)num || content > LOP_CONFIG_LINE_MAX) {
        lop_error_input(st->err, st->cfg->path, st->line, NULL, NULL,
                        "line is %zu characters long; the limit is %d: continue a long "
                        "list on indented lines",
                        content, LOP_CONFIG_LINE_MAX);
        return NULL;
    }
    memcpy(str, text, content);
    str[content] = '\0';
    st->indented = lead > 0;
    char *body = str + lead;
    if (*body == '[') {
        st->after_key = false;
        const char *close = strchr(body, ']');
        if (!close) {
            lop_error_input(st->err, st->cfg->path, st->line, NULL, NULL,
                            "a [section] header needs its closing `]`");
            return NULL;
        }
        const char *rest = close + 1;
        while (*rest == ' ' || *rest == '\t')
            rest++;
        if (*rest && *rest != ';' && *rest != '#') {
            lop_error_input(st->err, st->cfg->path, st->line, NULL, NULL,
                            "text after a [section] header; put `%s` on a line of its own",
                            rest);
            return NULL;
        }
        return record_section(st, body) ? strcat(str, "\n") : NULL;
    }
    cut_inline_comment(body);
    size_t sep = strcspn(body, "=:");
    if (!st->indented && body[sep] == ':') {
        lop_error_input(st->err, st->cfg->path, st->line, NULL, NULL,
                        "expected `key = value`; keys are separated from values by `=`");
        return NULL;
    }
    if (st->indented && st->after_key && body[sep] == '=' && st->cfg->n_entries > 0) {
        const lop_entry *last = &st->cfg->entries[st->cfg->n_entries - 1];
        lop_error_input(st->err, st->cfg->path, st->line, last->section, NULL,
                        "this indented line would continue `%s` (line %d); a key starts "
                        "at the beginning of its line",
                        last->key, last->line);
        return NULL;
    }
    if (body[sep] == '=') {
        st->after_key = true;
    } else if (!(st->indented && st->after_key)) {
        lop_error_input(st->err, st->cfg->path, st->line, NULL, NULL,
                        "expected `key = value`, a [section] header or a comment");
        return NULL;
    }
    return strcat(str, "\n");
}

static int add_entry(lop_config *cfg, const char *section, const char *key,
                     const char *value, int line)
{
    lop_entry *grown = realloc(cfg->entries, (cfg->n_entries + 1) * sizeof *grown);
    if (!grown)
        return -1;
    cfg->entries = grown;
    lop_entry *e = &grown[cfg->n_entries];
    e->section = lop_strdup(section);
    e->key = lop_strdup(key);
    e->value = lop_strdup(value);
    e->line = line;
    e->value_lines = malloc(sizeof *e->value_lines);
    e->n_value_lines = 1;
    if (!e->section || !e->key || !e->value || !e->value_lines) {
        free(e->section);
        free(e->key);
        free(e->value);
        free(e->value_lines);
        return -1;
    }
    e->value_lines[0] = line;
    cfg->n_entries++;
    return 0;
}

static int on_entry(void *user, const char *section, const char *key, const char *value)
{
    reader_state *st = user;
    lop_config *cfg = st->cfg;
    if (lop_error_is_set(st->err) || st->out_of_memory)
        return 1;
    lop_entry *last = cfg->n_entries ? &cfg->entries[cfg->n_entries - 1] : NULL;
    if (st->indented && last && strcmp(last->section, section) == 0 &&
        strcmp(last->key, key) == 0) {
        size_t a = strlen(last->value), b = strlen(value);
        char *joined = realloc(last->value, a + b + 2);
        if (joined)
            last->value = joined;
        int *lines = realloc(last->value_lines, (last->n_value_lines + 1) * sizeof *lines);
        if (lines)
            last->value_lines = lines;
        if (!joined || !lines) {
            st->out_of_memory = true;
            return 1;
        }
        joined[a] = '\n';
        memcpy(joined + a + 1, value, b + 1);
        lines[last->n_value_lines++] = st->line;
        return 1;
    }
    if (key[0] == '\0') {
        lop_error_input(st->err, cfg->path, st->line, section, NULL,
                        "a key name is missing before `=`");
        return 1;
    }
    const lop_entry *earlier = lop_config_find(cfg, section, key);
    if (earlier) {
        lop_error_input(st->err, cfg->path, st->line, section, key,
                        "given twice (first on line %d)", earlier->line);
        return 1;
    }
    if (add_entry(cfg, section, key, value, st->line) != 0)
        st->out_of_memory = true;
    return 1;
}

static bool only_space_and_comments(const lop_config *cfg)
{
    return cfg->n_entries == 0 && cfg->n_sections == 0;
}

lop_config *lop_config_read_text(const char *name, const char *text, size_t len,
                                 lop_error *err)
{
    lop_config *cfg = calloc(1, sizeof *cfg);
    if (!cfg)
        goto no_memory;
    cfg->path = lop_strdup(name);
    cfg->text = malloc(len + 1);
    if (!cfg->path || !cfg->text)
        goto no_memory;
    memcpy(cfg->text, text, len);
    cfg->text[len] = '\0';
    cfg->text_len = len;

    reader_state st = {.cfg = cfg, .err = err, .pos = cfg->text, .end = cfg->text + len};
    int bad_line = ini_parse_stream(read_line, &st, on_entry, &st);
    if (st.out_of_memory)
        goto no_memory;
    if (lop_error_is_set(err))
        goto fail;
    if (bad_line > 0) {
        lop_error_input(err, name, bad_line, NULL, NULL,
                        "expected `key = value`, a [section] header or a comment");
        goto fail;
    }
    if (bad_line < 0)
        goto no_memory;
    if (only_space_and_comments(cfg)) {
        lop_error_input(err, name, 0, NULL, NULL,
                        "the file holds no sections: a problem needs at least [problem], "
                        "[states], [prior], [actions] and [loss] or [payoff]");
        goto fail;
    }
    return cfg;
no_memory:
    lop_error_run(err, "out of memory while reading %s", name);
fail:
    lop_config_free(cfg);
    return NULL;
}

lop_config *lop_config_read_file(const char *path, lop_error *err)
{
    size_t len = 0;
    char *text = lop_read_whole_file(path, &len);
    if (!text) {
        lop_error_input(err, path, 0, NULL, NULL, "cannot read the file: %s",
                        strerror(errno));
        return NULL;
    }
    lop_config *cfg = lop_config_read_text(path, text, len, err);
    free(text);
    return cfg;
}

const lop_entry *lop_config_find(const lop_config *cfg, const char *section,
                                 const char *key)
{
    for (size_t i = 0; i < cfg->n_entries; i++)
        if (strcmp(cfg->entries[i].section, section) == 0 &&
            strcmp(cfg->entries[i].key, key) == 0)
            return &cfg->entries[i];
    return NULL;
}

lop_config *lop_config_copy(const lop_config *cfg)
{
    lop_config *copy = calloc(1, sizeof *copy);
    if (!copy)
        return NULL;
    copy->path = lop_strdup(cfg->path);
    copy->text = malloc(cfg->text_len + 1);
    copy->entries = calloc(cfg->n_entries ? cfg->n_entries : 1, sizeof *copy->entries);
    copy->sections = calloc(cfg->n_sections ? cfg->n_sections : 1, sizeof *copy->sections);
    if (!copy->path || !copy->text || !copy->entries || !copy->sections)
        goto fail;
    memcpy(copy->text, cfg->text, cfg->text_len + 1);
    copy->text_len = cfg->text_len;
    for (size_t i = 0; i < cfg->n_sections; i++) {
        copy->sections[i].line = cfg->sections[i].line;
        copy->sections[i].name = lop_strdup(cfg->sections[i].name);
        copy->n_sections++;
        if (!copy->sections[i].name)
            goto fail;
    }
    for (size_t i = 0; i < cfg->n_entries; i++) {
        const lop_entry *e = &cfg->entries[i];
        lop_entry *c = &copy->entries[i];
        *c = *e;
        c->section = lop_strdup(e->section);
        c->key = lop_strdup(e->key);
        c->value = lop_strdup(e->value);
        c->value_lines = malloc(e->n_value_lines * sizeof *c->value_lines);
        copy->n_entries++;
        if (!c->section || !c->key || !c->value || !c->value_lines)
            goto fail;
        memcpy(c->value_lines, e->value_lines, e->n_value_lines * sizeof *c->value_lines);
    }
    return copy;
fail:
    lop_config_free(copy);
    return NULL;
}

int lop_entry_line_at(const lop_entry *e, size_t offset)
{
    size_t piece = 0;
    for (size_t i = 0; i < offset && e->value[i]; i++)
        piece += e->value[i] == '\n';
    return piece < e->n_value_lines ? e->value_lines[piece] : e->line;
}

const lop_section *lop_config_section(const lop_config *cfg, const char *name)
{
    for (size_t i = 0; i < cfg->n_sections; i++)
        if (strcmp(cfg->sections[i].name, name) == 0)
            return &cfg->sections[i];
    return NULL;
}

int lop_config_set(lop_config *cfg, const char *section, const char *key,
                   const char *value, int line)
{
    for (size_t i = 0; i < cfg->n_entries; i++) {
        lop_entry *e = &cfg->entries[i];
        if (strcmp(e->section, section) == 0 && strcmp(e->key, key) == 0) {
            char *v = lop_strdup(value);
            if (!v)
                return -1;
            free(e->value);
            e->value = v;
            e->line = line;
            e->n_value_lines = 1;
            e->value_lines[0] = line;
            return 0;
        }
    }
    return add_entry(cfg, section, key, value, line);
}

size_t lop_config_remove(lop_config *cfg, const char *section, const char *key)
{
    size_t kept = 0, removed = 0;
    for (size_t i = 0; i < cfg->n_entries; i++) {
        lop_entry *e = &cfg->entries[i];
        if (strcmp(e->section, section) == 0 && strcmp(e->key, key) == 0) {
            free(e->section);
            free(e->key);
            free(e->value);
            free(e->value_lines);
            removed++;
        } else {
            cfg->entries[kept++] = *e;
        }
    }
    cfg->n_entries = kept;
    return removed;
}

void lop_config_free(lop_config *cfg)
{
    if (!cfg)
        return;
    for (size_t i = 0; i < cfg->n_entries; i++) {
        free(cfg->entries[i].section);
        free(cfg->entries[i].key);
        free(cfg->entries[i].value);
        free(cfg->entries[i].value_lines);
    }
    for (size_t i = 0; i < cfg->n_sections; i++)
        free(cfg->sections[i].name);
    free(cfg->entries);
    free(cfg->sections);
    free(cfg->path);
    free(cfg->text);
    free(cfg);
}
