/* Values of entries: numbers, counts, lists and labels, checked strictly
 * (`0.3x` is an error, never 0.3). Errors name the entry's file, line and key. */
#ifndef LOPSIDE_PARSE_H
#define LOPSIDE_PARSE_H

#include <stdbool.h>
#include <stddef.h>

#include "lopside/input/config.h"
#include "lopside/util/error.h"

/* A list of items split at commas and continuation lines, trimmed. */
typedef struct {
    char **items;
    int *lines;      /* the line each item stands on */
    size_t n;
} lop_list;

/* Returns LOP_OK after storing one number from e in *out; `inf`/`-inf` only if allow_inf. */
lop_status lop_parse_number(const lop_config *cfg, const lop_entry *e, bool allow_inf,
                            double *out, lop_error *err);

/* Returns LOP_OK after storing a whole number in [min, max] from e in *out. */
lop_status lop_parse_count(const lop_config *cfg, const lop_entry *e, size_t min,
                           size_t max, size_t *out, lop_error *err);

/* Returns LOP_OK after splitting e into items (caller frees with lop_list_free). */
lop_status lop_parse_list(const lop_config *cfg, const lop_entry *e, lop_list *out,
                          lop_error *err);

/* Returns LOP_OK after reading a list of numbers from e into a malloc'ed array. */
lop_status lop_parse_numbers(const lop_config *cfg, const lop_entry *e, double **out,
                             size_t *n, lop_error *err);

/* Returns LOP_OK after reading distinct labels usable as keys (letters, digits, _ and -). */
lop_status lop_parse_labels(const lop_config *cfg, const lop_entry *e, lop_list *out,
                            lop_error *err);

/* Returns LOP_OK after reading exactly `want` numbers, or one number repeated `want` times. */
lop_status lop_parse_per_state(const lop_config *cfg, const lop_entry *e, size_t want,
                               const char *what, double **out, lop_error *err);

/* Returns the line holding item `index` (0-based) of e's list value (its continuation
 * line when the list goes on), or the entry's line when there is no such item. */
int lop_entry_item_line(const lop_entry *e, size_t index);

/* Returns the index of label in list, or -1. */
long lop_list_index(const lop_list *list, const char *label);

/* Frees the items of list and empties it. */
void lop_list_free(lop_list *list);

#endif
