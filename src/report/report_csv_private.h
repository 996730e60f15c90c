/* Private to the CSV writer (report_csv.c, report_csv_studies.c): the set of files being
 * written and the RFC 4180 field writers. A file starts with csv_begin and ends with
 * csv_end; after the first failure every call does nothing and the set's status says
 * why. */
#ifndef LOPSIDE_REPORT_CSV_PRIVATE_H
#define LOPSIDE_REPORT_CSV_PRIVATE_H

#include <stdbool.h>
#include <stddef.h>

#include "lopside/util/error.h"
#include "lopside/util/outfile.h"
#include "lopside/model/problem.h"
#include "lopside/util/provenance.h"
#include "lopside/model/results.h"

typedef struct {
    lop_outfile out;
    char name[160];
    char holds[512];
    size_t rows;
} csv_file;

typedef struct {
    const char *dir;
    const lop_problem *p;
    const lop_results *r;
    const lop_provenance *prov;
    csv_file *files;       /* every file of this run, in the order written */
    size_t n, cap;
    csv_file *cur;         /* the file being written, NULL when none */
    int fields;            /* fields written on the current line */
    lop_error *err;
    lop_status status;     /* LOP_OK until the first failure */
} csv_set;

/* Returns the score unit of p, "units" when the file names none. */
const char *csv_score_unit(const lop_problem *p);

/* Returns true when a file of this name (ASCII case ignored, as some file systems
 * compare) is already part of the set. */
bool csv_taken(const csv_set *set, const char *name);

/* Returns true after starting file `name` (holding `holds`); false (after recording why)
 * on failure or after an earlier one. */
bool csv_begin(csv_set *set, const char *name, const char *holds);

/* Writes one field, quoted when it holds a comma, a quote, CR or LF (RFC 4180). */
void csv_str(csv_set *set, const char *s);

/* Writes a number as the shortest decimal that reads back to the same double; "nan", "inf"
 * and "-inf" for the numbers a double holds that have no decimal form. */
void csv_num(csv_set *set, double v);

/* Writes a number, or an empty field when it is NaN or infinite (JSON's null). */
void csv_finite(csv_set *set, double v);

/* Writes a count. */
void csv_size(csv_set *set, size_t v);

/* Writes state s: its number for numeric states, else its label. */
void csv_state(csv_set *set, size_t s);

/* Ends a line; data lines (not the header) are counted for index.csv. */
void csv_end_line(csv_set *set, bool data);

/* Writes a header line from a NULL-terminated list of names. */
void csv_header(csv_set *set, const char *const *names);

/* Closes the current file, keeping its temporary until all are renamed. */
void csv_end(csv_set *set);

/* Writes the tables of the studies: rules.csv, value_extra.csv, value_case_next.csv, the
 * files of every sweep, designs.csv, simulation.csv, simulation_rates.csv and
 * simulation_histogram.csv, each only when its data exists. */
void csv_tables_studies(csv_set *set);

#endif
