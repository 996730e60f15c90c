/* Private to the workbook writer (report_xlsx.c, report_xlsx_cells.c, report_xlsx_case.c,
 * report_xlsx_studies.c, report_xlsx_sweeps.c): the writer's state and the helpers every
 * sheet uses. Every libxlsxwriter return goes through xw_check, which keeps the first
 * failure with what was being written. */
#ifndef LOPSIDE_REPORT_XLSX_PRIVATE_H
#define LOPSIDE_REPORT_XLSX_PRIVATE_H

#include <stdbool.h>
#include <stddef.h>

#include <xlsxwriter.h>

#include "lopside/model/problem.h"
#include "lopside/util/provenance.h"
#include "lopside/model/results.h"

/* Most data rows of one table; the CSV folder and JSON hold them all. Far below the
 * format's limit of 1,048,576 rows, and keeps the file small enough to open. */
#define XW_ROWS_MAX 100000
/* Columns whose width is set (a grid of 1,000 values of y beside its tables fits);
 * further columns keep the default. */
#define XW_WIDTH_COLUMNS 2048
/* Most columns of choice rates in one table (actions times states); beyond this the rates
 * are left to the CSV folder and JSON, so no table outgrows a sheet's 16,384 columns. */
#define XW_RATE_COLUMNS_MAX 200
/* Series drawn on one chart; more would be unreadable. */
#define XW_SERIES_MAX 8

typedef struct {
    lxw_format *title, *heading, *bold, *note, *text, *wrap;
    lxw_format *prob, *score, *number, *count, *loglik, *grid_x, *switch_x;
    lxw_format *in_prob, *in_score, *in_number, *in_text; /* shaded: editable inputs */
    lxw_format *live_text, *live_score;                   /* bold: the decision */
    lxw_format *measure;      /* d', c, beta: 4 decimals */
    lxw_format *percent;      /* shares shown as percentages */
    lxw_format *head_wrap;    /* bold, wrapped: headers over several lines */
    lxw_format *value;        /* settings, estimates: up to 4 decimals, at least 1 */
    lxw_format *value_bold;   /* the same in bold: the axes of a grid */
} xw_formats;

/* Where the Case sheet put what the Summary cites ("" when absent). */
typedef struct {
    bool live;
    char bayes_action[40], bayes_score[40], runner_up[40], margin[40], evpi[40];
} xw_case_cells;

typedef struct {
    lxw_workbook *wb;
    const lop_problem *p;
    const lop_results *r;
    const lop_provenance *prov;
    lxw_error error;          /* first libxlsxwriter failure, LXW_NO_ERROR if none */
    char failed_at[96];       /* what was being written then */
    xw_formats f;
    xw_case_cells kase;
    char defined[1024];       /* the defined names, for the Summary to list */
    double widths[XW_WIDTH_COLUMNS]; /* column widths asked for on the sheet being written */
    bool rule_truncated;
    char **sweep_sheets;      /* the sheet name of each sweep (r->n_sweeps) */
} xlsx_writer;

/* A list of malloc'ed header texts. */
typedef struct {
    char **items;
    size_t n, cap;
} xw_names;

/* Keeps the first failure with what was being written. */
void xw_check(xlsx_writer *w, lxw_error e, const char *what);

/* Returns ptr, recording a memory failure when it is NULL. */
void *xw_check_ptr(xlsx_writer *w, void *ptr, const char *what);

/* Returns the score unit of p, "units" when the file names none. */
const char *xw_score_unit(const lop_problem *p);

/* Returns "Loss" or "Payoff": the file's orientation with a capital. */
const char *xw_orientation_title(const lop_problem *p);

/* Writes the absolute reference "$C$7" of (row, col) to buf. */
void xw_ref(char *buf, size_t size, lxw_row_t row, lxw_col_t col);

/* Writes the absolute range "$C$7:$C$9" to buf. */
void xw_range(char *buf, size_t size, lxw_row_t r0, lxw_col_t c0, lxw_row_t r1, lxw_col_t c1);

/* Writes text (a blank cell with fmt when text is empty). */
void xw_put_text(xlsx_writer *w, lxw_worksheet *ws, lxw_row_t row, lxw_col_t col,
                 const char *text, lxw_format *fmt);

/* Writes printf-formatted text. */
void xw_put_textf(xlsx_writer *w, lxw_worksheet *ws, lxw_row_t row, lxw_col_t col,
                  lxw_format *fmt, const char *fmtstr, ...)
    __attribute__((format(printf, 6, 7)));

/* Writes a number; infinities and NaN, which a cell cannot hold, as text. */
void xw_put_number(xlsx_writer *w, lxw_worksheet *ws, lxw_row_t row, lxw_col_t col, double v,
                   lxw_format *fmt);

/* Writes a number, or a blank cell when it is NaN (a value that does not exist). */
void xw_put_maybe(xlsx_writer *w, lxw_worksheet *ws, lxw_row_t row, lxw_col_t col, double v,
                  lxw_format *fmt);

/* Writes a formula with its cached value, so readers that do not recalculate see it. */
void xw_put_formula(xlsx_writer *w, lxw_worksheet *ws, lxw_row_t row, lxw_col_t col,
                    const char *formula, lxw_format *fmt, double cached);

/* Writes a formula whose value is text, with that text cached. */
void xw_put_formula_text(xlsx_writer *w, lxw_worksheet *ws, lxw_row_t row, lxw_col_t col,
                         const char *formula, lxw_format *fmt, const char *cached);

/* Printing: landscape, one page wide, header rows repeated up to `repeat` when >= 0. */
void xw_page_setup(xlsx_writer *w, lxw_worksheet *ws, int repeat);

/* Asks for columns first..last of the sheet being written to be at least `width`
 * characters wide; xw_apply_widths sets the widest asked for. */
void xw_set_width(xlsx_writer *w, lxw_col_t first, lxw_col_t last, double width);

/* Sets the widths asked for on ws and forgets them for the next sheet. */
void xw_apply_widths(xlsx_writer *w, lxw_worksheet *ws);

/* Ends a sheet of tables whose header is row `header`: rows down to it frozen and repeated
 * on every printed page, the page set up, the widths asked for applied. */
void xw_finish_sheet(xlsx_writer *w, lxw_worksheet *ws, lxw_row_t header);

/* Adds a printf-formatted header text to list. */
void xw_names_add(xlsx_writer *w, xw_names *list, const char *fmt, ...)
    __attribute__((format(printf, 3, 4)));

/* Frees the texts of list and empties it. */
void xw_names_free(xw_names *list);

/* Writes the headers h in row `row` from col, widens their columns, adds a native table
 * (header row with filters) named `name` down to last_row, and frees h. A table needs a
 * data row: with last_row == row only the headers are written. */
void xw_header_and_table(xlsx_writer *w, lxw_worksheet *ws, const char *name, lxw_row_t row,
                         lxw_col_t col, lxw_row_t last_row, xw_names *h);

/* Like xw_header_and_table, for headers that carry units: each header wraps over up to 5
 * lines in a column at most `widest` characters wide, the header row as tall as the
 * longest needs. */
void xw_header_and_table_wrapped(xlsx_writer *w, lxw_worksheet *ws, const char *name,
                                 lxw_row_t row, lxw_col_t col, lxw_row_t last_row, xw_names *h,
                                 double widest);

/* Makes the workbook's cell formats. */
void xw_make_formats(xlsx_writer *w);

/* Writes "ear = 0.9; swab = clear, flagged" (or that nothing was observed) to buf. */
void xw_observed_text(char *buf, size_t size, const lop_problem *p);

/* Writes a comma-separated list of items (at most `most`, then "...") to buf. */
void xw_list_text(char *buf, size_t size, char **items, size_t n, size_t most);

/* Writes a labelled value (label in A, number in B, unit in C); returns the next row. */
lxw_row_t xw_value_line(xlsx_writer *w, lxw_worksheet *ws, lxw_row_t row, const char *label,
                        double v, lxw_format *fmt, const char *unit);

/* Column of the values of information lines: the label in A overflows to D. */
#define XW_INFO_COL 4

/* Writes an information line: label in A (running on to D), the number in XW_INFO_COL,
 * the unit beside it; returns the next row. */
lxw_row_t xw_info_line(xlsx_writer *w, lxw_worksheet *ws, lxw_row_t row, const char *label,
                       double v, lxw_format *fmt, const char *unit);

/* Writes an information line whose value is text; returns the next row. */
lxw_row_t xw_info_text(xlsx_writer *w, lxw_worksheet *ws, lxw_row_t row, const char *label,
                       const char *text, lxw_format *fmt);

/* Returns the channel the rule's measurement grid is on, NULL when none. */
const lop_channel *xw_numeric_channel(const lop_problem *p, const lop_rule_result *rule);


/* Returns a new chart of `type`, NULL (failure recorded) when memory runs out. */
lxw_chart *xw_chart(xlsx_writer *w, uint8_t type, const char *what);

/* Returns a series of chart whose categories (x) and values are columns of `sheet` over
 * rows r0..r1, named `name`; NULL (failure recorded) when memory runs out. */
lxw_chart_series *xw_series(xlsx_writer *w, lxw_chart *chart, const char *sheet, lxw_row_t r0,
                            lxw_row_t r1, lxw_col_t cat_col, lxw_col_t val_col,
                            const char *name);

/* Inserts chart at (row, col) of ws scaled by x_scale and y_scale. */
void xw_insert_chart(xlsx_writer *w, lxw_worksheet *ws, lxw_row_t row, lxw_col_t col,
                     lxw_chart *chart, double x_scale, double y_scale);

/* Returns the sheet named `name` made valid and unused: the characters a sheet name may
 * not hold ([ ] : * ? / \ and control characters) become '_', a leading or trailing
 * apostrophe too, at most 31 characters (one astral character counts two), and " (2)",
 * " (3)", ... replace its end when a sheet of that name (ignoring ASCII case) exists or
 * it reads "History". NULL (failure recorded) when libxlsxwriter refuses it. */
lxw_worksheet *xw_add_sheet(xlsx_writer *w, const char *name, char *used, size_t size);

/* Writes the Case sheet: live formulas for finite problems, values otherwise. */
void xw_sheet_case(xlsx_writer *w, lxw_worksheet *ws);

/* Writes the Rules sheet: the Bayes rule and every [rule.NAME], risk and regret. */
void xw_sheet_rules(xlsx_writer *w, lxw_worksheet *ws);

/* Writes the Value sheet: EVPI, EVSI and net per channel and n, one more measurement. */
void xw_sheet_value(xlsx_writer *w, lxw_worksheet *ws);

/* Writes the Designs sheet: one row per [design.NAME]. */
void xw_sheet_designs(xlsx_writer *w, lxw_worksheet *ws);

/* Writes the Simulation sheet: per rule the simulated sessions, rates and histograms. */
void xw_sheet_simulation(xlsx_writer *w, lxw_worksheet *ws);

/* Writes the sheet of sweep k (r->sweeps[k]), named sheet. */
void xw_sheet_sweep(xlsx_writer *w, lxw_worksheet *ws, size_t k, const char *sheet);

#endif
