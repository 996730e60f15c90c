/* Output files appear whole or not at all: written to a temporary name in the
 * same folder and renamed over the target only when complete. */
#ifndef LOPSIDE_OUTFILE_H
#define LOPSIDE_OUTFILE_H

#include <stdio.h>

#include "lopside/util/error.h"

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

/* Finished temporaries waiting to be renamed together, so that a run's outputs appear
 * all or none: a failure in any writer leaves every earlier target untouched. */
typedef struct {
    lop_outfile *items;
    size_t n;
} lop_outfile_list;

/* Returns LOP_OK after finishing out and moving it into list (out is then empty); on
 * failure out's temporary is removed and err names the path. */
lop_status lop_outfile_defer(lop_outfile_list *list, lop_outfile *out, lop_error *err);

/* Returns LOP_OK after renaming every temporary of list over its target, in order, and
 * emptying list; after a failed rename the rest are removed and err names the path. */
lop_status lop_outfile_commit_all(lop_outfile_list *list, lop_error *err);

/* Removes every temporary of list and empties it. */
void lop_outfile_abandon_all(lop_outfile_list *list);

#endif
