/* The workbook's shared helpers: checked cell writes, widths, native tables, formats,
 * charts and sheet names (see report_xlsx_private.h). */
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <strings.h>

#include "lopside/report/report.h"
#include "report_xlsx_private.h"

/* Table headers widen their column up to this many characters. */
#define HEADER_WIDTH_MAX 36

void xw_check(xlsx_writer *w, lxw_error e, const char *what)
{
    if (e == LXW_NO_ERROR || w->error != LXW_NO_ERROR)
        return;
    w->error = e;
    snprintf(w->failed_at, sizeof w->failed_at, "%s", what);
}

/* Returns ptr, recording a memory failure when it is NULL. */
void *xw_check_ptr(xlsx_writer *w, void *ptr, const char *what)
{
    if (!ptr)
        xw_check(w, LXW_ERROR_MEMORY_MALLOC_FAILED, what);
    return ptr;
}

const char *xw_score_unit(const lop_problem *p)
{
    return p->score_unit[0] ? p->score_unit : "units";
}

/* "loss" or "payoff" with a capital. */
const char *xw_orientation_title(const lop_problem *p)
{
    return p->payoff ? "Payoff" : "Loss";
}

static void col_name(char *buf, lxw_col_t col)
{
    char tmp[8];
    size_t n = 0;
    unsigned c = (unsigned)col + 1;
    while (c) {
        tmp[n++] = (char)('A' + (c - 1) % 26);
        c = (c - 1) / 26;
    }
    for (size_t i = 0; i < n; i++)
        buf[i] = tmp[n - 1 - i];
    buf[n] = '\0';
}

/* Writes the absolute reference "$C$7" of (row, col) to buf. */
void xw_ref(char *buf, size_t size, lxw_row_t row, lxw_col_t col)
{
    char c[8];
    col_name(c, col);
    snprintf(buf, size, "$%s$%lu", c, (unsigned long)row + 1);
}

/* Writes the absolute range "$C$7:$C$9" to buf. */
void xw_range(char *buf, size_t size, lxw_row_t r0, lxw_col_t c0, lxw_row_t r1,
              lxw_col_t c1)
{
    char a[32], b[32];
    xw_ref(a, sizeof a, r0, c0);
    xw_ref(b, sizeof b, r1, c1);
    snprintf(buf, size, "%s:%s", a, b);
}

void xw_put_text(xlsx_writer *w, lxw_worksheet *ws, lxw_row_t row, lxw_col_t col,
                 const char *text, lxw_format *fmt)
{
    if (!text || !text[0]) {
        if (fmt)
            xw_check(w, worksheet_write_blank(ws, row, col, fmt), ws->name);
        return;
    }
    xw_check(w, worksheet_write_string(ws, row, col, text, fmt), ws->name);
}

void xw_put_textf(xlsx_writer *w, lxw_worksheet *ws, lxw_row_t row, lxw_col_t col,
                  lxw_format *fmt, const char *fmtstr, ...)
{
    char buf[2048];
    va_list ap;
    va_start(ap, fmtstr);
    vsnprintf(buf, sizeof buf, fmtstr, ap);
    va_end(ap);
    xw_put_text(w, ws, row, col, buf, fmt);
}

/* Writes a number; infinities and NaN, which a cell cannot hold, as text. */
void xw_put_number(xlsx_writer *w, lxw_worksheet *ws, lxw_row_t row, lxw_col_t col,
                   double v, lxw_format *fmt)
{
    if (isfinite(v))
        xw_check(w, worksheet_write_number(ws, row, col, v, fmt), ws->name);
    else
        xw_put_text(w, ws, row, col, isnan(v) ? "nan" : v > 0 ? "inf" : "-inf", fmt);
}

/* Writes a formula with its cached value, so readers that do not recalculate see it. */
void xw_put_formula(xlsx_writer *w, lxw_worksheet *ws, lxw_row_t row, lxw_col_t col,
                    const char *formula, lxw_format *fmt, double cached)
{
    xw_check(w, worksheet_write_formula_num(ws, row, col, formula, fmt, cached), ws->name);
}

void xw_put_formula_text(xlsx_writer *w, lxw_worksheet *ws, lxw_row_t row,
                         lxw_col_t col, const char *formula, lxw_format *fmt,
                         const char *cached)
{
    xw_check(w, worksheet_write_formula_str(ws, row, col, formula, fmt, cached), ws->name);
}

/* Printing: landscape, one page wide, header rows repeated from `repeat` when set. */
void xw_page_setup(xlsx_writer *w, lxw_worksheet *ws, int repeat)
{
    worksheet_set_landscape(ws);
    worksheet_fit_to_pages(ws, 1, 0);
    if (repeat >= 0)
        xw_check(w, worksheet_repeat_rows(ws, 0, (lxw_row_t)repeat), ws->name);
}

/* Asks for columns first..last of the sheet being written to be at least `width`
 * characters wide; xw_apply_widths sets the widest asked for. */
void xw_set_width(xlsx_writer *w, lxw_col_t first, lxw_col_t last, double width)
{
    for (lxw_col_t col = first; col <= last && col < XW_WIDTH_COLUMNS; col++)
        if (width > w->widths[col])
            w->widths[col] = width;
}

void xw_apply_widths(xlsx_writer *w, lxw_worksheet *ws)
{
    for (lxw_col_t col = 0; col < XW_WIDTH_COLUMNS; col++)
        if (w->widths[col] > 0)
            xw_check(w, worksheet_set_column(ws, col, col, w->widths[col], NULL), ws->name);
    memset(w->widths, 0, sizeof w->widths);
}

void xw_finish_sheet(xlsx_writer *w, lxw_worksheet *ws, lxw_row_t header)
{
    worksheet_freeze_panes(ws, header + 1, 0);
    xw_page_setup(w, ws, (int)header);
    xw_apply_widths(w, ws);
}

/* --- native tables ------------------------------------------------------------------ */

/* Returns true when a and b are equal ignoring ASCII case, as table headers compare. */
static bool same_header(const char *a, const char *b)
{
    for (; *a && *b; a++, b++) {
        char x = *a >= 'A' && *a <= 'Z' ? (char)(*a - 'A' + 'a') : *a;
        char y = *b >= 'A' && *b <= 'Z' ? (char)(*b - 'A' + 'a') : *b;
        if (x != y)
            return false;
    }
    return *a == *b;
}

/* Adds a native table (header row with filters) over rows first_row (the header) to
 * last_row and n columns from first_col. Headers are made unique as the format requires. */
static void add_table(xlsx_writer *w, lxw_worksheet *ws, const char *name,
                      lxw_row_t first_row, lxw_col_t first_col, lxw_row_t last_row,
                      char **headers, size_t n, lxw_format *header_format)
{
    if (last_row <= first_row || n == 0)
        return; /* a table needs a data row */
    lxw_table_column *cols = xw_check_ptr(w, calloc(n, sizeof *cols), name);
    lxw_table_column **list = xw_check_ptr(w, calloc(n + 1, sizeof *list), name);
    char **unique = xw_check_ptr(w, calloc(n, sizeof *unique), name);
    if (cols && list && unique) {
        for (size_t i = 0; i < n; i++) {
            size_t len = strlen(headers[i]) + 16;
            unique[i] = xw_check_ptr(w, malloc(len), name);
            if (!unique[i])
                break;
            snprintf(unique[i], len, "%s", headers[i]);
            for (int k = 2;; k++) {
                bool clash = false;
                for (size_t j = 0; j < i; j++)
                    clash |= same_header(unique[j], unique[i]);
                if (!clash)
                    break;
                snprintf(unique[i], len, "%s (%d)", headers[i], k);
            }
            cols[i].header = unique[i];
            cols[i].header_format = header_format;
            list[i] = &cols[i];
        }
        lxw_table_options opt = {.name = (char *)name, .columns = list};
        if (w->error == LXW_NO_ERROR)
            xw_check(w, worksheet_add_table(ws, first_row, first_col, last_row,
                                            (lxw_col_t)(first_col + n - 1), &opt),
                  name);
    }
    for (size_t i = 0; unique && i < n; i++)
        free(unique[i]);
    free(unique);
    free(list);
    free(cols);
}

void xw_names_add(xlsx_writer *w, xw_names *list, const char *fmt, ...)
{
    if (list->n == list->cap) {
        size_t cap = list->cap ? 2 * list->cap : 16;
        char **grown = xw_check_ptr(w, realloc(list->items, cap * sizeof *grown), "headers");
        if (!grown)
            return;
        list->items = grown;
        list->cap = cap;
    }
    char buf[512];
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(buf, sizeof buf, fmt, ap);
    va_end(ap);
    char *copy = xw_check_ptr(w, malloc(strlen(buf) + 1), "headers");
    if (!copy)
        return;
    strcpy(copy, buf);
    list->items[list->n++] = copy;
}

void xw_names_free(xw_names *list)
{
    for (size_t i = 0; i < list->n; i++)
        free(list->items[i]);
    free(list->items);
    memset(list, 0, sizeof *list);
}

/* Writes the headers in row `row` from col and adds the table below them. */
void xw_header_and_table(xlsx_writer *w, lxw_worksheet *ws, const char *name,
                         lxw_row_t row, lxw_col_t col, lxw_row_t last_row, xw_names *h)
{
    for (size_t i = 0; i < h->n; i++) {
        /* Room for the text and the filter button. */
        double chars = (double)strlen(h->items[i]) + 4;
        xw_put_text(w, ws, row, (lxw_col_t)(col + i), h->items[i], w->f.bold);
        xw_set_width(w, (lxw_col_t)(col + i), (lxw_col_t)(col + i),
                     chars < HEADER_WIDTH_MAX ? chars : HEADER_WIDTH_MAX);
    }
    add_table(w, ws, name, row, col, last_row, h->items, h->n, w->f.bold);
    xw_names_free(h);
}

/* Lines a header of `chars` characters takes in a column `width` characters wide, the
 * filter button taking about 3 of them on the last line. */
static size_t header_lines(size_t chars, double width)
{
    /* Words wrap whole, so a line holds a few characters less than the column. */
    size_t per = width > 7 ? (size_t)width - 4 : 3;
    return (chars + 3 + per - 1) / per;
}

void xw_header_and_table_wrapped(xlsx_writer *w, lxw_worksheet *ws, const char *name,
                                 lxw_row_t row, lxw_col_t col, lxw_row_t last_row, xw_names *h,
                                 double widest)
{
    size_t lines = 1;
    for (size_t i = 0; i < h->n; i++) {
        size_t chars = strlen(h->items[i]);
        /* Short headers set their width; long ones wrap in the widest column. */
        double width = (double)chars + 4 <= widest ? (double)chars + 4 : widest;
        if (width < 10)
            width = 10;
        size_t n = header_lines(chars, width);
        lines = n > lines ? n : lines;
        xw_put_text(w, ws, row, (lxw_col_t)(col + i), h->items[i], w->f.head_wrap);
        xw_set_width(w, (lxw_col_t)(col + i), (lxw_col_t)(col + i), width);
    }
    if (lines > 5)
        lines = 5;
    if (lines > 1)
        xw_check(w, worksheet_set_row(ws, row, 15.0 * (double)lines, NULL), ws->name);
    add_table(w, ws, name, row, col, last_row, h->items, h->n, w->f.head_wrap);
    xw_names_free(h);
}

/* --- formats ------------------------------------------------------------------------ */

static lxw_format *new_format(xlsx_writer *w, const char *num_format, bool bold, bool input)
{
    lxw_format *f = xw_check_ptr(w, workbook_add_format(w->wb), "formats");
    if (!f)
        return NULL;
    if (num_format)
        format_set_num_format(f, num_format);
    if (bold)
        format_set_bold(f);
    if (input) {
        /* A pale fill marks the cells a collaborator may edit; the Case sheet says so. */
        format_set_bg_color(f, 0xFFF4D6);
        format_set_border(f, LXW_BORDER_HAIR);
    }
    return f;
}

/* Scores get decimals by their size: 2 from 100 up, 3 from 1, 5 below. */
static const char *score_format(const lop_problem *p)
{
    double scale = 0;
    for (size_t i = 0; i < p->n_actions * p->n_states; i++)
        if (fabs(p->loss[i]) > scale)
            scale = fabs(p->loss[i]);
    return scale >= 100 ? "#,##0.00" : scale >= 1 ? "0.000" : "0.00000";
}

void xw_make_formats(xlsx_writer *w)
{
    xw_formats *f = &w->f;
    const char *score = score_format(w->p);
    f->title = new_format(w, NULL, true, false);
    if (f->title)
        format_set_font_size(f->title, 14);
    f->heading = new_format(w, NULL, true, false);
    if (f->heading)
        format_set_font_size(f->heading, 12);
    f->bold = new_format(w, NULL, true, false);
    f->note = new_format(w, NULL, false, false);
    if (f->note)
        format_set_italic(f->note);
    f->text = new_format(w, "@", false, false);
    f->wrap = new_format(w, NULL, false, false);
    if (f->wrap) {
        format_set_text_wrap(f->wrap);
        format_set_align(f->wrap, LXW_ALIGN_VERTICAL_TOP);
    }
    f->prob = new_format(w, "0.0000", false, false);
    f->score = new_format(w, score, false, false);
    f->number = new_format(w, "General", false, false);
    f->count = new_format(w, "0", false, false);
    f->loglik = new_format(w, "0.000", false, false);
    f->grid_x = new_format(w, "0.0000", false, false);
    f->switch_x = new_format(w, "0.000000", false, false);
    f->in_prob = new_format(w, "0.0000", false, true);
    f->in_score = new_format(w, score, false, true);
    f->in_number = new_format(w, "General", false, true);
    f->in_text = new_format(w, "@", false, true);
    f->live_text = new_format(w, NULL, true, false);
    f->live_score = new_format(w, score, true, false);
    f->measure = new_format(w, "0.0000", false, false);
    f->percent = new_format(w, "0.00%", false, false);
    f->value = new_format(w, "#,##0.0###", false, false);
    f->value_bold = new_format(w, "#,##0.0###", true, false);
    f->head_wrap = new_format(w, NULL, true, false);
    if (f->head_wrap) {
        format_set_text_wrap(f->head_wrap);
        format_set_align(f->head_wrap, LXW_ALIGN_VERTICAL_BOTTOM);
    }
}

/* --- text that several sheets show ------------------------------------------------------ */

/* Writes "ear = 0.9; swab = clear, flagged" (or that nothing was observed) to buf. */
void xw_observed_text(char *buf, size_t size, const lop_problem *p)
{
    size_t at = 0;
    buf[0] = '\0';
    for (size_t i = 0; i < p->n_channels && at < size; i++) {
        const lop_channel *c = &p->channels[i];
        for (size_t k = 0; k < c->n_observed && at < size; k++) {
            int n;
            if (k == 0)
                n = snprintf(buf + at, size - at, "%s%s = ", at ? "; " : "",
                             lop_report_channel_name(c));
            else
                n = snprintf(buf + at, size - at, ", ");
            at += n > 0 ? (size_t)n : 0;
            if (at >= size)
                break;
            if (c->kind == LOP_CHANNEL_TABLE)
                n = snprintf(buf + at, size - at, "%s", c->outcomes[c->observed_outcome[k]]);
            else
                n = snprintf(buf + at, size - at, "%.10g", c->observed_value[k]);
            at += n > 0 ? (size_t)n : 0;
        }
    }
    if (!buf[0])
        snprintf(buf, size, "nothing observed yet: the posterior is the prior");
}

/* Writes a comma-separated list of items (at most `most`, then "...") to buf. */
void xw_list_text(char *buf, size_t size, char **items, size_t n, size_t most)
{
    size_t at = 0;
    buf[0] = '\0';
    for (size_t i = 0; i < n && i < most && at < size; i++) {
        int k = snprintf(buf + at, size - at, "%s%s", i ? ", " : "", items[i]);
        at += k > 0 ? (size_t)k : 0;
    }
    if (n > most && at < size)
        snprintf(buf + at, size - at, ", ... (%zu in all)", n);
}

/* --- the Case sheet: live formulas ------------------------------------------------------ */


/* A labelled value in A, its number in B and unit in C; returns the next row. */
lxw_row_t xw_value_line(xlsx_writer *w, lxw_worksheet *ws, lxw_row_t row,
                        const char *label, double v, lxw_format *fmt, const char *unit)
{
    xw_put_text(w, ws, row, 0, label, NULL);
    xw_put_number(w, ws, row, 1, v, fmt);
    xw_put_text(w, ws, row, 2, unit, NULL);
    return row + 1;
}


const lop_channel *xw_numeric_channel(const lop_problem *p, const lop_rule_result *rule)
{
    return rule->numeric_channel >= 0 ? &p->channels[rule->numeric_channel] : NULL;
}

void xw_put_maybe(xlsx_writer *w, lxw_worksheet *ws, lxw_row_t row, lxw_col_t col, double v,
                  lxw_format *fmt)
{
    if (isnan(v))
        xw_check(w, worksheet_write_blank(ws, row, col, fmt), ws->name);
    else
        xw_put_number(w, ws, row, col, v, fmt);
}

lxw_row_t xw_info_line(xlsx_writer *w, lxw_worksheet *ws, lxw_row_t row, const char *label,
                       double v, lxw_format *fmt, const char *unit)
{
    xw_put_text(w, ws, row, 0, label, NULL);
    xw_put_number(w, ws, row, XW_INFO_COL, v, fmt);
    xw_put_text(w, ws, row, XW_INFO_COL + 1, unit, NULL);
    return row + 1;
}

lxw_row_t xw_info_text(xlsx_writer *w, lxw_worksheet *ws, lxw_row_t row, const char *label,
                       const char *text, lxw_format *fmt)
{
    xw_put_text(w, ws, row, 0, label, NULL);
    xw_put_text(w, ws, row, XW_INFO_COL, text, fmt);
    return row + 1;
}

/* --- charts ------------------------------------------------------------------------- */

lxw_chart *xw_chart(xlsx_writer *w, uint8_t type, const char *what)
{
    return xw_check_ptr(w, workbook_add_chart(w->wb, type), what);
}

lxw_chart_series *xw_series(xlsx_writer *w, lxw_chart *chart, const char *sheet, lxw_row_t r0,
                            lxw_row_t r1, lxw_col_t cat_col, lxw_col_t val_col,
                            const char *name)
{
    /* Ranges are given by sheet name and cells: libxlsxwriter quotes the name itself. */
    lxw_chart_series *s = xw_check_ptr(w, chart_add_series(chart, NULL, NULL), sheet);
    if (!s)
        return NULL;
    chart_series_set_categories(s, sheet, r0, cat_col, r1, cat_col);
    chart_series_set_values(s, sheet, r0, val_col, r1, val_col);
    if (name)
        chart_series_set_name(s, name);
    return s;
}

void xw_insert_chart(xlsx_writer *w, lxw_worksheet *ws, lxw_row_t row, lxw_col_t col,
                     lxw_chart *chart, double x_scale, double y_scale)
{
    lxw_chart_options opt = {.x_scale = x_scale, .y_scale = y_scale};
    xw_check(w, worksheet_insert_chart_opt(ws, row, col, chart, &opt), ws->name);
}

/* --- sheet names --------------------------------------------------------------------- */

/* Excel's limit on a sheet name, in UTF-16 units. */
#define SHEET_NAME_UNITS 31

/* Returns the UTF-16 length of the UTF-8 sequence starting with byte c (astral: 2). */
static size_t utf16_units(unsigned char c)
{
    return c >= 0xF0 ? 2 : 1;
}

/* Returns the bytes of the UTF-8 sequence starting with byte c. */
static size_t utf8_bytes(unsigned char c)
{
    return c >= 0xF0 ? 4 : c >= 0xE0 ? 3 : c >= 0xC0 ? 2 : 1;
}

/* Writes to out (size > 4·31 bytes) the longest start of `in` that fits in `units`. */
static void clip_name(char *out, size_t size, const char *in, size_t units)
{
    size_t at = 0, used = 0;
    while (in[at]) {
        size_t b = utf8_bytes((unsigned char)in[at]);
        size_t u = utf16_units((unsigned char)in[at]);
        if (used + u > units || at + b >= size)
            break;
        at += b;
        used += u;
    }
    memcpy(out, in, at);
    out[at] = '\0';
}

/* Returns true when a sheet named `name` exists (ASCII case ignored), is one of the
 * workbook's own sheets (present or not, so every file names them alike) or is reserved. */
static bool sheet_taken(xlsx_writer *w, const char *name)
{
    static const char *const fixed[] = {"Summary", "Case", "Rule", "Rules", "Value",
                                        "Designs", "Simulation", "Inputs", "History"};
    for (size_t i = 0; i < sizeof fixed / sizeof fixed[0]; i++)
        if (strcasecmp(name, fixed[i]) == 0)
            return true;
    return workbook_validate_sheet_name(w->wb, name) == LXW_ERROR_SHEETNAME_ALREADY_USED;
}

lxw_worksheet *xw_add_sheet(xlsx_writer *w, const char *name, char *used, size_t size)
{
    char clean[4 * SHEET_NAME_UNITS + 8], base[4 * SHEET_NAME_UNITS + 8];
    size_t n = 0;
    for (const char *c = name; *c && n + 1 < sizeof clean; c++) {
        unsigned char u = (unsigned char)*c;
        bool bad = u < 0x20 || strchr("[]:*?/\\", *c) != NULL;
        clean[n++] = bad ? '_' : *c;
    }
    clean[n] = '\0';
    if (!clean[0])
        snprintf(clean, sizeof clean, "sweep");
    clip_name(base, sizeof base, clean, SHEET_NAME_UNITS);
    size_t len = strlen(base);
    if (base[0] == '\'')
        base[0] = '_';
    if (len && base[len - 1] == '\'')
        base[len - 1] = '_';
    snprintf(used, size, "%s", base);
    for (int k = 2; sheet_taken(w, used) && k < 10000; k++) {
        char suffix[16], head[4 * SHEET_NAME_UNITS + 8];
        snprintf(suffix, sizeof suffix, " (%d)", k);
        clip_name(head, sizeof head, base, SHEET_NAME_UNITS - strlen(suffix));
        snprintf(used, size, "%s%s", head, suffix);
    }
    xw_check(w, workbook_validate_sheet_name(w->wb, used), "sheet names");
    if (w->error != LXW_NO_ERROR)
        return NULL;
    return xw_check_ptr(w, workbook_add_worksheet(w->wb, used), used);
}
