/* The problem file as an ordered list of entries, each with its line.
 * This module knows INI syntax only, nothing of decisions. */
#ifndef LOPSIDE_CONFIG_H
#define LOPSIDE_CONFIG_H

#include <stddef.h>
#include <stdio.h>

#include "lopside/util/error.h"

/* The longest physical line the packaged inih accepts (INI_MAX_LINE = 200,
 * including the newline and the terminating NUL). */
#define LOP_CONFIG_LINE_MAX 198

typedef struct {
    char *section;   /* as written between the brackets, "" before any */
    char *key;
    char *value;     /* continuation lines joined with '\n' */
    int line;        /* line of the key */
    int *value_lines;     /* line of each piece of the value (continuations) */
    size_t n_value_lines;
} lop_entry;

typedef struct {
    char *name;
    int line;
} lop_section;

typedef struct {
    char *path;          /* as given by the user, for messages */
    char *text;          /* the whole file as read, for provenance and reports */
    size_t text_len;
    lop_entry *entries;
    size_t n_entries;
    lop_section *sections;
    size_t n_sections;
} lop_config;

/* Returns a config read from path, or NULL with err set (input errors carry the line). */
lop_config *lop_config_read_file(const char *path, lop_error *err);

/* Returns a config parsed from text (display name `name`), or NULL with err set. */
lop_config *lop_config_read_text(const char *name, const char *text, size_t len,
                                 lop_error *err);

/* Returns a deep copy of cfg, or NULL when memory runs out. */
lop_config *lop_config_copy(const lop_config *cfg);

/* Returns the first entry of section/key, or NULL. */
const lop_entry *lop_config_find(const lop_config *cfg, const char *section,
                                 const char *key);

/* Returns the line holding byte `offset` of e's value (continuation lines have their own). */
int lop_entry_line_at(const lop_entry *e, size_t offset);

/* Returns the section record named `name`, or NULL. */
const lop_section *lop_config_section(const lop_config *cfg, const char *name);

/* Returns 0 after setting section/key to value (added when absent), -1 on no memory. */
int lop_config_set(lop_config *cfg, const char *section, const char *key,
                   const char *value, int line);

/* Returns the number of entries removed: every entry of section/key. */
size_t lop_config_remove(lop_config *cfg, const char *section, const char *key);

/* Frees cfg; NULL is a no-op. */
void lop_config_free(lop_config *cfg);

#endif
