/* Private to the writers: the sections of [value], [sweep.NAME] and [design.NAME]
 * (report_text_studies.c, report_json_studies.c). */
#ifndef LOPSIDE_REPORT_STUDIES_H
#define LOPSIDE_REPORT_STUDIES_H

#include <jansson.h>
#include <stdio.h>

#include "lopside/model/problem.h"
#include "lopside/model/results.h"

/* Returns a JSON number, or null when v is not finite (JSON has no infinities). */
json_t *lop_json_number(double v);

/* Sets `key` to a loss and, for payoff problems, `payoff_key` to the payoff (its negation). */
void lop_json_score(json_t *obj, const lop_problem *p, const char *key, const char *payoff_key,
                    double loss);

/* Adds `value`, `sweeps` and `designs` to root, and `flatness` to root's `case` for
 * estimates (format.md's keys). */
void lop_report_json_studies(json_t *root, const lop_problem *p, const lop_results *r);

/* Writes the text sections of the value of information, sweeps and designs to out. */
void lop_report_text_studies(FILE *out, const lop_problem *p, const lop_results *r);

/* Writes one line of the ranges of f ("Thresholds within 1%, 5%, 10% ...: a to b; ..."),
 * nothing when f was not computed. */
void lop_report_text_flatness(FILE *out, const lop_problem *p, const lop_flatness *f,
                              const char *what, const char *indent);

/* Returns the text of a design's goal, e.g. "choice_rate.say_yes" (static storage for
 * the fixed goals, buf otherwise). */
const char *lop_report_goal_name(const lop_problem *p, const lop_design_spec *d, char *buf,
                                 size_t size);

#endif
