/* Writers of the results model. They only read the problem and the results. */
#ifndef LOPSIDE_REPORT_H
#define LOPSIDE_REPORT_H

#include <stdio.h>

#include "lopside/error.h"
#include "lopside/problem.h"
#include "lopside/provenance.h"
#include "lopside/results.h"

/* Returns the name a channel is shown by: NAME of [evidence.NAME], or "evidence". */
const char *lop_report_channel_name(const lop_channel *c);

/* Writes the report for a person at a terminal to out. */
void lop_report_text(FILE *out, const lop_problem *p, const lop_results *r);

/* Writes the parsed problem, as `lopside check` shows it, to out. */
void lop_report_problem(FILE *out, const lop_problem *p);

/* Returns LOP_OK after writing the JSON results (format.md's keys) to path atomically. */
lop_status lop_report_json(const char *path, const lop_problem *p, const lop_results *r,
                           const lop_provenance *prov, lop_error *err);

#endif
