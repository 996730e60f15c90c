/* Small string and file helpers shared by the modules. */
#ifndef LOPSIDE_STRUTIL_H
#define LOPSIDE_STRUTIL_H

#include <stdbool.h>
#include <stddef.h>

/* Returns a malloc'ed copy of s, or NULL when memory runs out. */
char *lop_strdup(const char *s);

/* Returns a malloc'ed copy of the first n bytes of s without surrounding white space. */
char *lop_strndup_trim(const char *s, size_t n);

/* Returns true when the n bytes at s are well-formed UTF-8. */
bool lop_utf8_valid(const char *s, size_t n);

/* Largest file read whole (bytes): far above any problem file. */
#define LOP_FILE_MAX ((size_t)64 << 20)

/* Returns the malloc'ed contents of path (NUL-terminated, length in *len), or NULL with errno set. */
char *lop_read_whole_file(const char *path, size_t *len);

/* Returns the Levenshtein distance between a and b, counting ASCII case-insensitively. */
size_t lop_edit_distance(const char *a, const char *b);

/* Returns true when a misspelling of length len is close enough to suggest at distance d. */
bool lop_close_enough(size_t d, size_t len);

/* Returns the nearest of the n choices to word when close enough to suggest, else NULL. */
const char *lop_nearest(const char *word, char **choices, size_t n);

/* Room for any text lop_shortest_number writes, with its NUL. */
#define LOP_NUMBER_MAX 32

/* Returns buf after writing the shortest of v's %.15g, %.16g and %.17g texts that strtod
 * reads back as v (the finite v only; C-locale decimal point). */
char *lop_shortest_number(double v, char *buf, size_t size);

#endif
