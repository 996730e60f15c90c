/* The keys of the input format, declared once: each key's type, the values it allows
 * and its default. The table drives unknown-key errors, "did you mean" suggestions, the
 * builders' defaults (lop_keys_default) and the reference printed by `lopside keys`
 * (and, as Markdown, the README's key reference). */
#ifndef LOPSIDE_KEYS_H
#define LOPSIDE_KEYS_H

#include <stdbool.h>
#include <stdio.h>

/* What a key's value is. */
typedef enum {
    LOP_KEY_TEXT,         /* free text */
    LOP_KEY_NUMBER,       /* one finite number */
    LOP_KEY_WHOLE,        /* one whole number */
    LOP_KEY_NUMBERS,      /* a comma-separated list of finite numbers */
    LOP_KEY_WORDS,        /* a comma-separated list of labels */
    LOP_KEY_CHOICE,       /* one word of a fixed set (named in the help) */
    LOP_KEY_YES_NO,       /* yes or no */
    LOP_KEY_PATH,         /* a path to one number of the file (path.h) */
} lop_key_type;

typedef struct {
    const char *kind;     /* section kind: "problem", "evidence", ... */
    const char *key;      /* a trailing ".*" matches any name after the dot */
    lop_key_type type;
    const char *bounds;   /* the values allowed, e.g. "> 0", "1 to 1000"; "" any */
    const char *fallback; /* the default when the key is absent; "" none */
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

/* Returns the numeric default of key in section kind (a key whose default is a number;
 * anything else is a defect of the caller, and returns NAN). */
double lop_keys_default(const char *kind, const char *key);

/* Returns the name of a key type, e.g. "number", "list of numbers". */
const char *lop_keys_type_name(lop_key_type type);

/* Prints the format reference (every section and key) to out; as a Markdown table (the
 * README's key reference) when markdown is true. */
void lop_keys_print_reference(FILE *out, bool markdown);

#endif
