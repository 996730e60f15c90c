/* Output files appear whole or not at all: written to a temporary name in the
 * same folder and renamed over the target only when complete. */
#ifndef LOPSIDE_OUTFILE_H
#define LOPSIDE_OUTFILE_H

#include <stdio.h>

#include "lopside/error.h"

typedef struct {
    char *path;       /* the target */
    char *tmp_path;   /* where the bytes go until commit */
    FILE *file;
} lop_outfile;

/* Returns LOP_OK with out->file open on a temporary beside path, or LOP_ERUN naming path. */
lop_status lop_outfile_open(lop_outfile *out, const char *path, lop_error *err);

/* Returns LOP_OK after flushing and closing the temporary, which stays for a later
 * lop_outfile_commit (so several files can be renamed into place together, or another
 * library can write the temporary by name); on failure the temporary is removed, the
 * target is untouched, and err names the path. */
lop_status lop_outfile_finish(lop_outfile *out, lop_error *err);

/* Returns LOP_OK after flushing, closing (unless finished) and renaming over the target;
 * on failure the temporary is removed, the target is untouched, and err names the path. */
lop_status lop_outfile_commit(lop_outfile *out, lop_error *err);

/* Removes the temporary and forgets out; safe after commit or on a zeroed struct. */
void lop_outfile_abandon(lop_outfile *out);

#endif
