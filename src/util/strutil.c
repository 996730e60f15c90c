#include <ctype.h>
#include <errno.h>
#include <float.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "lopside/util/strutil.h"

char *lop_strdup(const char *s)
{
    size_t n = strlen(s) + 1;
    char *copy = malloc(n);
    if (copy)
        memcpy(copy, s, n);
    return copy;
}

char *lop_strndup_trim(const char *s, size_t n)
{
    while (n > 0 && isspace((unsigned char)*s)) {
        s++;
        n--;
    }
    while (n > 0 && isspace((unsigned char)s[n - 1]))
        n--;
    char *copy = malloc(n + 1);
    if (copy) {
        memcpy(copy, s, n);
        copy[n] = '\0';
    }
    return copy;
}

bool lop_utf8_valid(const char *s, size_t n)
{
    const unsigned char *p = (const unsigned char *)s, *end = p + n;
    while (p < end) {
        unsigned c = *p++;
        size_t follow;
        unsigned min;
        if (c < 0x80)
            continue;
        else if (c >= 0xC2 && c <= 0xDF)
            follow = 1, min = 0x80;
        else if (c >= 0xE0 && c <= 0xEF)
            follow = 2, min = 0x800;
        else if (c >= 0xF0 && c <= 0xF4)
            follow = 3, min = 0x10000;
        else
            return false;
        unsigned code = c & (0x3F >> follow);
        if ((size_t)(end - p) < follow)
            return false;
        for (size_t i = 0; i < follow; i++) {
            if ((p[i] & 0xC0) != 0x80)
                return false;
            code = (code << 6) | (p[i] & 0x3F);
        }
        if (code < min || code > 0x10FFFF || (code >= 0xD800 && code <= 0xDFFF))
            return false;
        p += follow;
    }
    return true;
}

char *lop_read_whole_file(const char *path, size_t *len)
{
    FILE *f = fopen(path, "rb");
    if (!f)
        return NULL;
    size_t cap = 4096, used = 0;
    char *buf = malloc(cap);
    while (buf) {
        used += fread(buf + used, 1, cap - used - 1, f);
        if (used < cap - 1)
            break;
        if (cap >= LOP_FILE_MAX) { /* a problem file is text, not a device or a dump */
            free(buf);
            buf = NULL;
            errno = EFBIG;
            break;
        }
        char *grown = realloc(buf, cap * 2);
        if (!grown) {
            free(buf);
            buf = NULL;
            errno = ENOMEM;
            break;
        }
        buf = grown;
        cap *= 2;
    }
    int failed = ferror(f);
    int saved = errno;
    fclose(f);
    if (buf && failed) {
        free(buf);
        errno = saved ? saved : EIO;
        return NULL;
    }
    if (buf) {
        buf[used] = '\0';
        *len = used;
    }
    return buf;
}

size_t lop_edit_distance(const char *a, const char *b)
{
    size_t la = strlen(a), lb = strlen(b);
    size_t *row = malloc((lb + 1) * sizeof *row);
    if (!row)
        return (size_t)-1;
    for (size_t j = 0; j <= lb; j++)
        row[j] = j;
    for (size_t i = 1; i <= la; i++) {
        size_t diag = row[0];
        row[0] = i;
        for (size_t j = 1; j <= lb; j++) {
            size_t up = row[j];
            size_t cost = tolower((unsigned char)a[i - 1]) != tolower((unsigned char)b[j - 1]);
            size_t best = diag + cost;
            if (up + 1 < best)
                best = up + 1;
            if (row[j - 1] + 1 < best)
                best = row[j - 1] + 1;
            row[j] = best;
            diag = up;
        }
    }
    size_t d = row[lb];
    free(row);
    return d;
}

bool lop_close_enough(size_t d, size_t len)
{
    size_t limit = len / 3 > 2 ? len / 3 : 2;
    return d <= limit && d < len;
}

const char *lop_nearest(const char *word, char **choices, size_t n)
{
    const char *best = NULL;
    size_t best_d = (size_t)-1;
    for (size_t i = 0; i < n; i++) {
        size_t d = lop_edit_distance(word, choices[i]);
        if (d < best_d) {
            best_d = d;
            best = choices[i];
        }
    }
    return best && lop_close_enough(best_d, strlen(word)) ? best : NULL;
}

char *lop_shortest_number(double v, char *buf, size_t size)
{
    /* 15 digits are not always enough to tell doubles apart, 17 always are; the first that
     * reads back is the shortest round trip (0.05, not 0.050000000000000003), since %.15g
     * drops trailing zeros and a normal double's half-ulp is below a tenth of the 15-digit
     * spacing. Subnormals hold fewer digits (5e-324), so they try from one digit up. */
    int first = v != 0 && fabs(v) < DBL_MIN ? 1 : 15;
    for (int digits = first; digits <= 17; digits++) {
        snprintf(buf, size, "%.*g", digits, v);
        if (strtod(buf, NULL) == v)
            break;
    }
    return buf;
}
