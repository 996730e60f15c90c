/* Writers of the results model. They only read the problem and the results. */
#ifndef LOPSIDE_REPORT_H
#define LOPSIDE_REPORT_H

#include <stdio.h>

#include "lopside/util/error.h"
#include "lopside/util/outfile.h"
#include "lopside/model/problem.h"
#include "lopside/util/provenance.h"
#include "lopside/model/results.h"

/* Returns the name a channel is shown by: NAME of [evidence.NAME], or "evidence". */
const char *lop_report_channel_name(const lop_channel *c);

/* Writes to buf what a numeric channel's rule reads: the channel's name with one repeat,
 * else its summary, "the mean of the 3 readings of ear" ("geometric mean" for lognormal
 * noise, "sum of the 3 counts" for poisson and binomial). */
void lop_report_measurement_name(char *buf, size_t size, const lop_channel *c);

/* Writes to buf the measurement a threshold sweep's thresholds lie on: the name (as
 * lop_report_measurement_name) of the problem's numeric channel, or "the measurement". */
void lop_report_threshold_measurement(char *buf, size_t size, const lop_problem *p);

/* Writes the report for a person at a terminal to out. */
void lop_report_text(FILE *out, const lop_problem *p, const lop_results *r,
                     const lop_provenance *prov);

/* Writes the parsed problem, as `lopside check` shows it, to out. */
void lop_report_problem(FILE *out, const lop_problem *p);

/* Returns LOP_OK after writing the JSON results (format.md's keys) to a temporary beside
 * path, handed to `pending` to be renamed with the run's other outputs. */
lop_status lop_report_json(const char *path, const lop_problem *p, const lop_results *r,
                           const lop_provenance *prov, lop_outfile_list *pending,
                           lop_error *err);

/* Writes to buf (size bytes, always terminated) how rule row `row` reads: "swab = flagged"
 * for one repeat, "swab: clear 1, flagged 1" for several, channels joined by "; ";
 * "" when the problem has no outcome-table channel. */
void lop_report_row_given(char *buf, size_t size, const lop_problem *p,
                          const lop_rule_result *rule, size_t row);

/* Returns the name of a channel's kind: "table", or its noise family ("gaussian", ...). */
const char *lop_report_noise_name(const lop_channel *c);

/* Returns LOP_OK after writing one CSV file per table and index.csv into folder dir
 * (created with any missing parent) as temporaries, handed to `pending` (index.csv last)
 * to be renamed with the run's other outputs; on failure no file in dir has changed and
 * err names the path. */
lop_status lop_report_csv(const char *dir, const lop_problem *p, const lop_results *r,
                          const lop_provenance *prov, lop_outfile_list *pending,
                          lop_error *err);

/* Returns LOP_OK after writing the XLSX workbook (Summary, Case, Rule, and as the file asks
 * Rules, Value, a sheet per sweep, Designs and Simulation, then Inputs) to a temporary in
 * path's folder, handed to `pending` to be renamed with the run's other outputs; on
 * failure the old file is untouched and err names the path and libxlsxwriter's reason. */
lop_status lop_report_xlsx(const char *path, const lop_problem *p, const lop_results *r,
                           const lop_provenance *prov, lop_outfile_list *pending,
                           lop_error *err);

#endif
