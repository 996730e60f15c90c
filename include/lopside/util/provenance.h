/* Where results came from: tool version, input path and SHA-256, time. */
#ifndef LOPSIDE_PROVENANCE_H
#define LOPSIDE_PROVENANCE_H

#include <stdbool.h>
#include <stddef.h>

#define LOP_VERSION "0.1.0"

typedef struct {
    const char *input_path;
    char sha256[65];          /* lowercase hex of the input bytes */
    char generated[32];       /* UTC, ISO 8601 */
    const char *input_text;   /* the input bytes (not owned), shown by the workbook */
    size_t input_len;
    bool has_seed;            /* a random seed was used ([simulate]) */
    unsigned long long seed;
} lop_provenance;

/* Fills prov for the input bytes text[0..len) read from path, stamped with the time now;
 * prov keeps pointers to path and text, which must outlive it. */
void lop_provenance_fill(lop_provenance *prov, const char *path, const char *text,
                         size_t len);

#endif
