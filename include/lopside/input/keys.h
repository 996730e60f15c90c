/* The keys of the input format, declared once. The table drives parsing checks,
 * "did you mean" suggestions and the reference printed by `lopside keys`. */
#ifndef LOPSIDE_KEYS_H
#define LOPSIDE_KEYS_H

#include <stdbool.h>
#include <stdio.h>

typedef struct {
    const char *kind;     /* section kind: "problem", "evidence", ... */
    const char *key;      /* a trailing ".*" matches any name after the dot */
    const char *help;
} lop_key_spec;

typedef struct {
    const char *kind;
    bool named;           /* [kind.NAME] allowed */
    bool name_required;   /* only [kind.NAME] */
    const char *help;
} lop_section_spec;

/* Returns the spec of section kind `kind`, or NULL when the format has no such section. */
const lop_section_spec *lop_keys_section(const char *kind);

/* Returns the spec of key in section kind, or NULL when the format has no such key there. */
const lop_key_spec *lop_keys_find(const char *kind, const char *key);

/* Returns the known key of section kind nearest to key, or NULL when none is close. */
const char *lop_keys_suggest(const char *kind, const char *key);

/* Returns the known section kind nearest to kind, or NULL when none is close. */
const char *lop_keys_suggest_section(const char *kind);

/* Prints the format reference (every section and key) to out. */
void lop_keys_print_reference(FILE *out);

#endif
