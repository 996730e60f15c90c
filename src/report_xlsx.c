/* The XLSX workbook for collaborators: Summary, Case (live formulas), Rule, Inputs.
 *
 * One static function per sheet and per block; each returns at once when its data is
 * absent, so later sheets plug in beside them. Every libxlsxwriter return is checked: the
 * first failure is kept with what was being written and reported with lxw_strerror.
 *
 * Safety: libxlsxwriter writes the file itself at workbook_close, so it is given a
 * temporary name beside the target (made with mkstemp by lop_outfile_open) and the
 * temporary is renamed over the target only after a successful close. */
#include <errno.h>
#include <fcntl.h>
#include <math.h>
#include <stdarg.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include <xlsxwriter.h>

#include "lopside/evidence.h"
#include "lopside/outfile.h"
#include "lopside/report.h"

/* Most data rows of one table on the Rule sheet; the CSV folder and JSON hold them all.
 * Far below the format's limit of 1,048,576 rows, and keeps the file small enough to open. */
#define RULE_ROWS_MAX 100000
/* Most observations the Case sheet turns into live formulas, one row each; beyond this the
 * log-likelihoods are written as values. */
#define LIVE_OBSERVATIONS_MAX 5000
/* Rows of the rule table drawn as separate series on the Rule chart. */
#define CHART_SERIES_MAX 6
/* Stands for log(0) in formulas: exp(-1E+300 - max) is exactly 0, and sums of a few
 * million such terms stay finite. */
#define LOG_ZERO "-1E+300"
#define LOG_ZERO_VALUE (-1e300)
/* log(sqrt(2 pi)), for the gaussian log-density where NORM.DIST underflows. */
#define LOG_SQRT_2PI_TEXT "0.918938533204672742"

/* Columns whose width is set; further columns keep the default. */
#define WIDTH_COLUMNS 256
/* Table headers widen their column up to this many characters. */
#define HEADER_WIDTH_MAX 36

typedef struct {
    lxw_format *title, *heading, *bold, *note, *text, *wrap;
    lxw_format *prob, *score, *number, *count, *loglik, *grid_x, *switch_x;
    lxw_format *in_prob, *in_score, *in_number, *in_text; /* shaded: editable inputs */
    lxw_format *live_text, *live_score;                   /* bold: the decision */
} formats;

/* Where the Case sheet put what the Summary cites ("" when absent). */
typedef struct {
    bool live;
    char bayes_action[40], bayes_score[40], runner_up[40], margin[40], evpi[40];
} case_cells;

typedef struct {
    lxw_workbook *wb;
    const lop_problem *p;
    const lop_results *r;
    const lop_provenance *prov;
    lxw_error error;          /* first libxlsxwriter failure, LXW_NO_ERROR if none */
    char failed_at[96];       /* what was being written then */
    formats f;
    case_cells kase;
    char defined[512];        /* the defined names, for the Summary to list */
    double widths[WIDTH_COLUMNS]; /* column widths asked for on the sheet being written */
    bool rule_truncated;
} xlsx_writer;

/* --- checks and cells -------------------------------------------------------------- */

/* Keeps the first failure with what was being written. */
static void check(xlsx_writer *w, lxw_error e, const char *what)
{
    if (e == LXW_NO_ERROR || w->error != LXW_NO_ERROR)
        return;
    w->error = e;
    snprintf(w->failed_at, sizeof w->failed_at, "%s", what);
}

/* Returns ptr, recording a memory failure when it is NULL. */
static void *check_ptr(xlsx_writer *w, void *ptr, const char *what)
{
    if (!ptr)
        check(w, LXW_ERROR_MEMORY_MALLOC_FAILED, what);
    return ptr;
}

static const char *score_unit(const lop_problem *p)
{
    return p->score_unit[0] ? p->score_unit : "units";
}

/* "loss" or "payoff" with a capital. */
static const char *Orientation(const lop_problem *p)
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
static void ref(char *buf, size_t size, lxw_row_t row, lxw_col_t col)
{
    char c[8];
    col_name(c, col);
    snprintf(buf, size, "$%s$%lu", c, (unsigned long)row + 1);
}

/* Writes the absolute range "$C$7:$C$9" to buf. */
static void range(char *buf, size_t size, lxw_row_t r0, lxw_col_t c0, lxw_row_t r1,
                  lxw_col_t c1)
{
    char a[32], b[32];
    ref(a, sizeof a, r0, c0);
    ref(b, sizeof b, r1, c1);
    snprintf(buf, size, "%s:%s", a, b);
}

static void put_text(xlsx_writer *w, lxw_worksheet *ws, lxw_row_t row, lxw_col_t col,
                     const char *text, lxw_format *fmt)
{
    if (!text || !text[0]) {
        if (fmt)
            check(w, worksheet_write_blank(ws, row, col, fmt), ws->name);
        return;
    }
    check(w, worksheet_write_string(ws, row, col, text, fmt), ws->name);
}

static void put_textf(xlsx_writer *w, lxw_worksheet *ws, lxw_row_t row, lxw_col_t col,
                      lxw_format *fmt, const char *fmtstr, ...)
    __attribute__((format(printf, 6, 7)));

static void put_textf(xlsx_writer *w, lxw_worksheet *ws, lxw_row_t row, lxw_col_t col,
                      lxw_format *fmt, const char *fmtstr, ...)
{
    char buf[2048];
    va_list ap;
    va_start(ap, fmtstr);
    vsnprintf(buf, sizeof buf, fmtstr, ap);
    va_end(ap);
    put_text(w, ws, row, col, buf, fmt);
}

/* Writes a number; infinities and NaN, which a cell cannot hold, as text. */
static void put_number(xlsx_writer *w, lxw_worksheet *ws, lxw_row_t row, lxw_col_t col,
                       double v, lxw_format *fmt)
{
    if (isfinite(v))
        check(w, worksheet_write_number(ws, row, col, v, fmt), ws->name);
    else
        put_text(w, ws, row, col, isnan(v) ? "nan" : v > 0 ? "inf" : "-inf", fmt);
}

/* Writes a formula with its cached value, so readers that do not recalculate see it. */
static void put_formula(xlsx_writer *w, lxw_worksheet *ws, lxw_row_t row, lxw_col_t col,
                        const char *formula, lxw_format *fmt, double cached)
{
    check(w, worksheet_write_formula_num(ws, row, col, formula, fmt, cached), ws->name);
}

static void put_formula_text(xlsx_writer *w, lxw_worksheet *ws, lxw_row_t row,
                             lxw_col_t col, const char *formula, lxw_format *fmt,
                             const char *cached)
{
    check(w, worksheet_write_formula_str(ws, row, col, formula, fmt, cached), ws->name);
}

/* Printing: landscape, one page wide, header rows repeated from `repeat` when set. */
static void page_setup(xlsx_writer *w, lxw_worksheet *ws, int repeat)
{
    worksheet_set_landscape(ws);
    worksheet_fit_to_pages(ws, 1, 0);
    if (repeat >= 0)
        check(w, worksheet_repeat_rows(ws, 0, (lxw_row_t)repeat), ws->name);
}

/* Asks for columns first..last of the sheet being written to be at least `width`
 * characters wide; apply_widths sets the widest asked for. */
static void set_width(xlsx_writer *w, lxw_worksheet *ws, lxw_col_t first, lxw_col_t last,
                      double width)
{
    (void)ws;
    for (lxw_col_t col = first; col <= last && col < WIDTH_COLUMNS; col++)
        if (width > w->widths[col])
            w->widths[col] = width;
}

static void apply_widths(xlsx_writer *w, lxw_worksheet *ws)
{
    for (lxw_col_t col = 0; col < WIDTH_COLUMNS; col++)
        if (w->widths[col] > 0)
            check(w, worksheet_set_column(ws, col, col, w->widths[col], NULL), ws->name);
    memset(w->widths, 0, sizeof w->widths);
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
                      char **headers, size_t n)
{
    if (last_row <= first_row || n == 0)
        return; /* a table needs a data row */
    lxw_table_column *cols = check_ptr(w, calloc(n, sizeof *cols), name);
    lxw_table_column **list = check_ptr(w, calloc(n + 1, sizeof *list), name);
    char **unique = check_ptr(w, calloc(n, sizeof *unique), name);
    if (cols && list && unique) {
        for (size_t i = 0; i < n; i++) {
            size_t len = strlen(headers[i]) + 16;
            unique[i] = check_ptr(w, malloc(len), name);
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
            list[i] = &cols[i];
        }
        lxw_table_options opt = {.name = (char *)name, .columns = list};
        if (w->error == LXW_NO_ERROR)
            check(w, worksheet_add_table(ws, first_row, first_col, last_row,
                                         (lxw_col_t)(first_col + n - 1), &opt),
                  name);
    }
    for (size_t i = 0; unique && i < n; i++)
        free(unique[i]);
    free(unique);
    free(list);
    free(cols);
}

/* A list of malloc'ed header texts. */
typedef struct {
    char **items;
    size_t n, cap;
} names;

static void names_add(xlsx_writer *w, names *list, const char *fmt, ...)
    __attribute__((format(printf, 3, 4)));

static void names_add(xlsx_writer *w, names *list, const char *fmt, ...)
{
    if (list->n == list->cap) {
        size_t cap = list->cap ? 2 * list->cap : 16;
        char **grown = check_ptr(w, realloc(list->items, cap * sizeof *grown), "headers");
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
    char *copy = check_ptr(w, malloc(strlen(buf) + 1), "headers");
    if (!copy)
        return;
    strcpy(copy, buf);
    list->items[list->n++] = copy;
}

static void names_free(names *list)
{
    for (size_t i = 0; i < list->n; i++)
        free(list->items[i]);
    free(list->items);
    memset(list, 0, sizeof *list);
}

/* Writes the headers in row `row` from col and adds the table below them. */
static void header_and_table(xlsx_writer *w, lxw_worksheet *ws, const char *name,
                             lxw_row_t row, lxw_col_t col, lxw_row_t last_row, names *h)
{
    for (size_t i = 0; i < h->n; i++) {
        /* Room for the text and the filter button. */
        double chars = (double)strlen(h->items[i]) + 4;
        put_text(w, ws, row, (lxw_col_t)(col + i), h->items[i], w->f.bold);
        set_width(w, ws, (lxw_col_t)(col + i), (lxw_col_t)(col + i),
                  chars < HEADER_WIDTH_MAX ? chars : HEADER_WIDTH_MAX);
    }
    add_table(w, ws, name, row, col, last_row, h->items, h->n);
    names_free(h);
}

/* --- formats ------------------------------------------------------------------------ */

static lxw_format *new_format(xlsx_writer *w, const char *num_format, bool bold, bool input)
{
    lxw_format *f = check_ptr(w, workbook_add_format(w->wb), "formats");
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

static void make_formats(xlsx_writer *w)
{
    formats *f = &w->f;
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
}

/* --- text that several sheets show ------------------------------------------------------ */

static size_t observations(const lop_problem *p)
{
    size_t n = 0;
    for (size_t i = 0; i < p->n_channels; i++)
        n += p->channels[i].n_observed;
    return n;
}

/* Writes "ear = 0.9; swab = clear, flagged" (or that nothing was observed) to buf. */
static void observed_text(char *buf, size_t size, const lop_problem *p)
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
static void list_text(char *buf, size_t size, char **items, size_t n, size_t most)
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

/* Rows of the Case sheet's blocks, planned before writing so that formulas can cite cells
 * further down. Columns are fixed per block (see each writer). */
typedef struct {
    lxw_row_t *model_header;  /* per channel: header row of its evidence-model table */
    bool live_obs;            /* observations are rows of formulas */
    size_t n_obs;
    lxw_row_t obs_header;     /* observations: A channel, B repeat, C observed, D.. per state */
    lxw_row_t post_header;    /* posterior: A state, B prior, C ln L, D ln(prior L), E post */
    lxw_row_t score_header;   /* loss/payoff: A state, B.. actions, then the best */
    lxw_row_t act_header;     /* actions: A action, B expected, C short of the Bayes action */
    lxw_row_t decision;       /* decision block: A label, B value, C unit */
    lxw_col_t width;          /* columns used by the blocks */
} case_layout;

enum { DECIDE_POS, DECIDE_ACTION, DECIDE_SCORE, DECIDE_RUNNER, DECIDE_MARGIN, DECIDE_EVPI,
       DECIDE_ROWS };

static bool plan_case(xlsx_writer *w, case_layout *L)
{
    const lop_problem *p = w->p;
    memset(L, 0, sizeof *L);
    L->model_header = check_ptr(w, calloc(p->n_channels + 1, sizeof *L->model_header),
                                "Case sheet");
    if (!L->model_header)
        return false;
    lxw_row_t row = 4;
    lxw_col_t width = 5;
    for (size_t i = 0; i < p->n_channels; i++) {
        const lop_channel *c = &p->channels[i];
        L->model_header[i] = row + 1;
        row += (lxw_row_t)(3 + p->n_states);
        size_t cols = 1 + (c->kind == LOP_CHANNEL_TABLE ? c->n_outcomes : 2);
        if (cols > width)
            width = (lxw_col_t)cols;
    }
    L->n_obs = observations(p);
    L->live_obs = L->n_obs > 0 && L->n_obs <= LIVE_OBSERVATIONS_MAX;
    if (L->live_obs) {
        L->obs_header = row + 1;
        row += (lxw_row_t)(3 + L->n_obs);
        if (3 + p->n_states > width)
            width = (lxw_col_t)(3 + p->n_states);
    }
    L->post_header = row + 1;
    row += (lxw_row_t)(3 + p->n_states);
    L->score_header = row + 1;
    row += (lxw_row_t)(3 + p->n_states);
    if (2 + p->n_actions > width)
        width = (lxw_col_t)(2 + p->n_actions);
    L->act_header = row + 1;
    row += (lxw_row_t)(3 + p->n_actions);
    L->decision = row + 1;
    L->width = width;
    return true;
}

/* One table per channel: P(outcome | state), or the gaussian's mean and sd per state. */
static void case_evidence_model(xlsx_writer *w, lxw_worksheet *ws, const case_layout *L)
{
    const lop_problem *p = w->p;
    for (size_t i = 0; i < p->n_channels; i++) {
        const lop_channel *c = &p->channels[i];
        const char *name = lop_report_channel_name(c);
        lxw_row_t h = L->model_header[i];
        names head = {0};
        names_add(w, &head, "state%s%s%s", p->unit[0] ? " (" : "", p->unit,
                  p->unit[0] ? ")" : "");
        if (c->kind == LOP_CHANNEL_TABLE) {
            put_textf(w, ws, h - 1, 0, w->f.heading, "Evidence: %s, P(outcome | state)%s",
                      name, c->repeats > 1 ? " of each repeat" : "");
            for (size_t o = 0; o < c->n_outcomes; o++)
                names_add(w, &head, "%s", c->outcomes[o]);
        } else {
            put_textf(w, ws, h - 1, 0, w->f.heading,
                      "Evidence: %s, one measurement is gaussian in each state", name);
            names_add(w, &head, "mean");
            names_add(w, &head, "sd");
        }
        for (size_t s = 0; s < p->n_states; s++) {
            lxw_row_t row = h + 1 + (lxw_row_t)s;
            put_text(w, ws, row, 0, p->state_labels[s], NULL);
            if (c->kind == LOP_CHANNEL_TABLE) {
                for (size_t o = 0; o < c->n_outcomes; o++)
                    put_number(w, ws, row, (lxw_col_t)(1 + o), c->given[s * c->n_outcomes + o],
                               w->f.in_prob);
            } else {
                put_number(w, ws, row, 1, c->center[s], w->f.in_number);
                put_number(w, ws, row, 2, c->spread[s], w->f.in_number);
            }
        }
        char table[32];
        snprintf(table, sizeof table, "evidence_%zu", i + 1);
        header_and_table(w, ws, table, h, 0, h + (lxw_row_t)p->n_states, &head);
    }
}

/* ln P(observation | state) as a formula over the model cells, with its value. */
static void observation_cell(xlsx_writer *w, lxw_worksheet *ws, const case_layout *L,
                             size_t ch, size_t k, size_t s, lxw_row_t row)
{
    const lop_problem *p = w->p;
    const lop_channel *c = &p->channels[ch];
    lxw_row_t h = L->model_header[ch];
    lxw_row_t srow = h + 1 + (lxw_row_t)s;
    char obs[32], formula[1024];
    ref(obs, sizeof obs, row, 2);
    if (c->kind == LOP_CHANNEL_TABLE) {
        char given[72], labels[72];
        range(given, sizeof given, srow, 1, srow, (lxw_col_t)c->n_outcomes);
        range(labels, sizeof labels, h, 1, h, (lxw_col_t)c->n_outcomes);
        double pr = c->given[s * c->n_outcomes + c->observed_outcome[k]];
        snprintf(formula, sizeof formula,
                 "=IF(INDEX(%s,MATCH(%s,%s,0))>0,LN(INDEX(%s,MATCH(%s,%s,0))),%s)", given, obs,
                 labels, given, obs, labels, LOG_ZERO);
        put_formula(w, ws, row, (lxw_col_t)(3 + s), formula, w->f.loglik,
                    pr > 0 ? log(pr) : LOG_ZERO_VALUE);
    } else {
        char m[32], sd[32], dens[160];
        ref(m, sizeof m, srow, 1);
        ref(sd, sizeof sd, srow, 2);
        snprintf(dens, sizeof dens, "_xlfn.NORM.DIST(%s,%s,%s,FALSE)", obs, m, sd);
        /* Beyond about 38 sd the density underflows; the log-density formula takes over. */
        snprintf(formula, sizeof formula, "=IF(%s>0,LN(%s),-((%s-%s)/%s)^2/2-LN(%s)-%s)", dens,
                 dens, obs, m, sd, sd, LOG_SQRT_2PI_TEXT);
        double z = (c->observed_value[k] - c->center[s]) / c->spread[s];
        put_formula(w, ws, row, (lxw_col_t)(3 + s), formula, w->f.loglik,
                    -0.5 * z * z - log(c->spread[s]) - 0.91893853320467274178);
    }
}

/* One row per observed value; one column of log-likelihoods per state. */
static void case_observations(xlsx_writer *w, lxw_worksheet *ws, const case_layout *L)
{
    const lop_problem *p = w->p;
    if (!L->live_obs)
        return;
    lxw_row_t h = L->obs_header;
    put_text(w, ws, h - 1, 0, "Observations: the case at hand, with ln P(observed | state)",
             w->f.heading);
    names head = {0};
    names_add(w, &head, "channel");
    names_add(w, &head, "repeat");
    names_add(w, &head, "observed");
    for (size_t s = 0; s < p->n_states; s++)
        names_add(w, &head, "ln likelihood: %s", p->state_labels[s]);
    lxw_row_t row = h + 1;
    for (size_t i = 0; i < p->n_channels; i++) {
        const lop_channel *c = &p->channels[i];
        for (size_t k = 0; k < c->n_observed; k++, row++) {
            put_text(w, ws, row, 0, lop_report_channel_name(c), NULL);
            put_number(w, ws, row, 1, (double)(k + 1), w->f.count);
            if (c->kind == LOP_CHANNEL_TABLE)
                put_text(w, ws, row, 2, c->outcomes[c->observed_outcome[k]], w->f.in_text);
            else
                put_number(w, ws, row, 2, c->observed_value[k], w->f.in_number);
            for (size_t s = 0; s < p->n_states; s++)
                observation_cell(w, ws, L, i, k, s, row);
        }
    }
    header_and_table(w, ws, "observations", h, 0, row - 1, &head);
}

/* The cached log-likelihood of every state given every observation (engine's own sum). */
static double *observed_loglik(xlsx_writer *w)
{
    double *ll = check_ptr(w, calloc(w->p->n_states, sizeof *ll), "Case sheet");
    if (ll)
        lop_evidence_add_observed(w->p, ll);
    return ll;
}

/* Prior, log-likelihood, and the posterior by log-sum-exp, as formulas. */
static void case_posterior(xlsx_writer *w, lxw_worksheet *ws, const case_layout *L)
{
    const lop_problem *p = w->p;
    lxw_row_t h = L->post_header, first = h + 1, last = h + (lxw_row_t)p->n_states;
    put_text(w, ws, h - 1, 0, "Posterior: prior times likelihood, normalized", w->f.heading);
    double *ll = observed_loglik(w);
    if (!ll)
        return;
    char joint[72], formula[512], a[32], b[32];
    range(joint, sizeof joint, first, 3, last, 3);
    for (size_t s = 0; s < p->n_states; s++) {
        lxw_row_t row = first + (lxw_row_t)s;
        if (p->states_kind == LOP_STATES_VALUES)
            put_number(w, ws, row, 0, p->state_values[s], NULL);
        else
            put_text(w, ws, row, 0, p->state_labels[s], NULL);
        put_number(w, ws, row, 1, p->prior[s], w->f.in_prob);
        if (L->live_obs) {
            char col[72];
            range(col, sizeof col, L->obs_header + 1, (lxw_col_t)(3 + s),
                  L->obs_header + (lxw_row_t)L->n_obs, (lxw_col_t)(3 + s));
            snprintf(formula, sizeof formula, "=SUM(%s)", col);
            put_formula(w, ws, row, 2, formula, w->f.loglik, ll[s]);
        } else {
            put_number(w, ws, row, 2, ll[s], w->f.loglik);
        }
        ref(a, sizeof a, row, 1);
        ref(b, sizeof b, row, 2);
        snprintf(formula, sizeof formula, "=IF(%s>0,LN(%s)+%s,%s)", a, a, b, LOG_ZERO);
        put_formula(w, ws, row, 3, formula, w->f.loglik,
                    p->prior[s] > 0 ? log(p->prior[s]) + ll[s] : LOG_ZERO_VALUE);
        ref(a, sizeof a, row, 3);
        /* Log-sum-exp: shift by the largest term so that exp never underflows to all 0. */
        snprintf(formula, sizeof formula, "=EXP(%s-MAX(%s))/SUMPRODUCT(EXP(%s-MAX(%s)))", a,
                 joint, joint, joint);
        put_formula(w, ws, row, 4, formula, w->f.prob, w->r->kase.posterior[s]);
    }
    free(ll);
    names head = {0};
    names_add(w, &head, "state%s%s%s", p->unit[0] ? " (" : "", p->unit, p->unit[0] ? ")" : "");
    names_add(w, &head, "prior");
    names_add(w, &head, "ln likelihood");
    names_add(w, &head, "ln (prior × likelihood)");
    names_add(w, &head, "posterior");
    header_and_table(w, ws, "posterior", h, 0, last, &head);
}

/* The loss or payoff table, states down and actions across, with the best per state. */
static void case_scores(xlsx_writer *w, lxw_worksheet *ws, const case_layout *L)
{
    const lop_problem *p = w->p;
    lxw_row_t h = L->score_header;
    put_textf(w, ws, h - 1, 0, w->f.heading, "%s (%s) of each action in each state",
              Orientation(p), score_unit(p));
    lxw_col_t best_col = (lxw_col_t)(1 + p->n_actions);
    char row_range[72], formula[160];
    for (size_t s = 0; s < p->n_states; s++) {
        lxw_row_t row = h + 1 + (lxw_row_t)s;
        put_text(w, ws, row, 0, p->state_labels[s], NULL);
        double best = lop_problem_oriented(p, lop_problem_loss(p, 0, s));
        for (size_t a = 0; a < p->n_actions; a++) {
            double v = lop_problem_oriented(p, lop_problem_loss(p, a, s));
            put_number(w, ws, row, (lxw_col_t)(1 + a), v, w->f.in_score);
            best = p->payoff ? fmax(best, v) : fmin(best, v);
        }
        range(row_range, sizeof row_range, row, 1, row, (lxw_col_t)p->n_actions);
        snprintf(formula, sizeof formula, "=%s(%s)", p->payoff ? "MAX" : "MIN", row_range);
        put_formula(w, ws, row, best_col, formula, w->f.score, best);
    }
    names head = {0};
    names_add(w, &head, "state");
    for (size_t a = 0; a < p->n_actions; a++)
        names_add(w, &head, "%s (%s)", p->actions[a], score_unit(p));
    names_add(w, &head, "best in this state (%s)", score_unit(p));
    header_and_table(w, ws, p->payoff ? "payoff" : "loss", h, 0, h + (lxw_row_t)p->n_states,
                     &head);
}

/* Expected score of each action: SUMPRODUCT of its column with the posterior. */
static void case_actions(xlsx_writer *w, lxw_worksheet *ws, const case_layout *L)
{
    const lop_problem *p = w->p;
    const lop_case_result *c = &w->r->kase;
    lxw_row_t h = L->act_header;
    put_textf(w, ws, h - 1, 0, w->f.heading, "Expected %s of each action given the posterior",
              lop_problem_orientation(p));
    char post[72], col[72], formula[512], a_cell[32], b_cell[32], bayes[32], bscore[32];
    range(post, sizeof post, L->post_header + 1, 4, L->post_header + (lxw_row_t)p->n_states, 4);
    ref(bayes, sizeof bayes, L->decision + DECIDE_ACTION, 1);
    ref(bscore, sizeof bscore, L->decision + DECIDE_SCORE, 1);
    for (size_t a = 0; a < p->n_actions; a++) {
        lxw_row_t row = h + 1 + (lxw_row_t)a;
        put_text(w, ws, row, 0, p->actions[a], NULL);
        range(col, sizeof col, L->score_header + 1, (lxw_col_t)(1 + a),
              L->score_header + (lxw_row_t)p->n_states, (lxw_col_t)(1 + a));
        snprintf(formula, sizeof formula, "=SUMPRODUCT(%s,%s)", col, post);
        put_formula(w, ws, row, 1, formula, w->f.score,
                    lop_problem_oriented(p, c->expected_loss[a]));
        ref(a_cell, sizeof a_cell, row, 0);
        ref(b_cell, sizeof b_cell, row, 1);
        /* How far each other action falls short of the Bayes action (>= 0 either way). */
        if (p->payoff)
            snprintf(formula, sizeof formula, "=IF(%s=%s,\"\",%s-%s)", a_cell, bayes, bscore,
                     b_cell);
        else
            snprintf(formula, sizeof formula, "=IF(%s=%s,\"\",%s-%s)", a_cell, bayes, b_cell,
                     bscore);
        if (a == c->bayes_action)
            put_formula_text(w, ws, row, 2, formula, w->f.score, "");
        else
            put_formula(w, ws, row, 2, formula, w->f.score,
                        c->expected_loss[a] - c->expected_loss[c->bayes_action]);
    }
    names head = {0};
    names_add(w, &head, "action");
    names_add(w, &head, "expected %s (%s)", lop_problem_orientation(p), score_unit(p));
    names_add(w, &head, "short of the Bayes action (%s)", score_unit(p));
    header_and_table(w, ws, "actions", h, 0, h + (lxw_row_t)p->n_actions, &head);
}

/* The Bayes action by INDEX/MATCH on the best expected score (ties: the earlier action,
 * as MATCH finds the first), runner-up, margin and EVPI. */
static void case_decision(xlsx_writer *w, lxw_worksheet *ws, const case_layout *L)
{
    const lop_problem *p = w->p;
    const lop_case_result *c = &w->r->kase;
    const char *unit = score_unit(p);
    const char *best = p->payoff ? "MAX" : "MIN";
    lxw_row_t d = L->decision;
    lxw_row_t a0 = L->act_header + 1, a1 = L->act_header + (lxw_row_t)p->n_actions;
    char acts[72], el[72], shortfall[72], bestcol[72], post[72], pos[32], score[32];
    char formula[512];
    range(acts, sizeof acts, a0, 0, a1, 0);
    range(el, sizeof el, a0, 1, a1, 1);
    range(shortfall, sizeof shortfall, a0, 2, a1, 2);
    range(bestcol, sizeof bestcol, L->score_header + 1, (lxw_col_t)(1 + p->n_actions),
          L->score_header + (lxw_row_t)p->n_states, (lxw_col_t)(1 + p->n_actions));
    range(post, sizeof post, L->post_header + 1, 4, L->post_header + (lxw_row_t)p->n_states, 4);
    ref(pos, sizeof pos, d + DECIDE_POS, 1);
    ref(score, sizeof score, d + DECIDE_SCORE, 1);

    put_text(w, ws, d - 1, 0, "Decision for the case", w->f.heading);
    put_text(w, ws, d + DECIDE_POS, 0, "Bayes action (its place in the list)", NULL);
    snprintf(formula, sizeof formula, "=MATCH(%s(%s),%s,0)", best, el, el);
    put_formula(w, ws, d + DECIDE_POS, 1, formula, w->f.count, (double)(c->bayes_action + 1));

    put_text(w, ws, d + DECIDE_ACTION, 0, "Bayes action", w->f.bold);
    snprintf(formula, sizeof formula, "=INDEX(%s,%s)", acts, pos);
    put_formula_text(w, ws, d + DECIDE_ACTION, 1, formula, w->f.live_text,
                     p->actions[c->bayes_action]);

    put_textf(w, ws, d + DECIDE_SCORE, 0, NULL, "Expected %s of the Bayes action",
              lop_problem_orientation(p));
    snprintf(formula, sizeof formula, "=INDEX(%s,%s)", el, pos);
    put_formula(w, ws, d + DECIDE_SCORE, 1, formula, w->f.live_score,
                lop_problem_oriented(p, c->expected_loss[c->bayes_action]));
    put_text(w, ws, d + DECIDE_SCORE, 2, unit, NULL);

    put_text(w, ws, d + DECIDE_RUNNER, 0, "Runner-up", NULL);
    snprintf(formula, sizeof formula, "=INDEX(%s,MATCH(MIN(%s),%s,0))", acts, shortfall,
             shortfall);
    put_formula_text(w, ws, d + DECIDE_RUNNER, 1, formula, NULL, p->actions[c->runner_up]);

    put_text(w, ws, d + DECIDE_MARGIN, 0, "Margin over the runner-up", NULL);
    snprintf(formula, sizeof formula, "=MIN(%s)", shortfall);
    put_formula(w, ws, d + DECIDE_MARGIN, 1, formula, w->f.score, c->margin);
    put_text(w, ws, d + DECIDE_MARGIN, 2, unit, NULL);

    /* EVPI = E[score of the best action per state] - score of the Bayes action. */
    put_text(w, ws, d + DECIDE_EVPI, 0, "Value of perfect information (EVPI)", NULL);
    if (p->payoff)
        snprintf(formula, sizeof formula, "=MAX(0,SUMPRODUCT(%s,%s)-%s)", bestcol, post, score);
    else
        snprintf(formula, sizeof formula, "=MAX(0,%s-SUMPRODUCT(%s,%s))", score, bestcol, post);
    put_formula(w, ws, d + DECIDE_EVPI, 1, formula, w->f.score, c->evpi);
    put_text(w, ws, d + DECIDE_EVPI, 2, unit, NULL);

    case_cells *k = &w->kase;
    k->live = true;
    snprintf(k->bayes_action, sizeof k->bayes_action, "Case!$B$%lu",
             (unsigned long)(d + DECIDE_ACTION + 1));
    snprintf(k->bayes_score, sizeof k->bayes_score, "Case!$B$%lu",
             (unsigned long)(d + DECIDE_SCORE + 1));
    snprintf(k->runner_up, sizeof k->runner_up, "Case!$B$%lu",
             (unsigned long)(d + DECIDE_RUNNER + 1));
    snprintf(k->margin, sizeof k->margin, "Case!$B$%lu",
             (unsigned long)(d + DECIDE_MARGIN + 1));
    snprintf(k->evpi, sizeof k->evpi, "Case!$B$%lu", (unsigned long)(d + DECIDE_EVPI + 1));
}

static void case_charts(xlsx_writer *w, lxw_worksheet *ws, const case_layout *L)
{
    const lop_problem *p = w->p;
    lxw_col_t at = (lxw_col_t)(L->width + 1);
    char cats[64], vals[64];
    lxw_row_t f = L->post_header + 1, l = L->post_header + (lxw_row_t)p->n_states;

    lxw_chart *chart = check_ptr(w, workbook_add_chart(w->wb, LXW_CHART_COLUMN), "Case chart");
    if (!chart)
        return;
    snprintf(cats, sizeof cats, "=Case!$A$%lu:$A$%lu", (unsigned long)f + 1,
             (unsigned long)l + 1);
    snprintf(vals, sizeof vals, "=Case!$B$%lu:$B$%lu", (unsigned long)f + 1,
             (unsigned long)l + 1);
    lxw_chart_series *s = check_ptr(w, chart_add_series(chart, cats, vals), "Case chart");
    if (s)
        chart_series_set_name(s, "prior");
    snprintf(vals, sizeof vals, "=Case!$E$%lu:$E$%lu", (unsigned long)f + 1,
             (unsigned long)l + 1);
    s = check_ptr(w, chart_add_series(chart, cats, vals), "Case chart");
    if (s)
        chart_series_set_name(s, "posterior");
    chart_title_set_name(chart, "Prior and posterior of each state");
    chart_axis_set_name(chart->y_axis, "probability");
    chart_axis_set_min(chart->y_axis, 0);
    chart_legend_set_position(chart, LXW_CHART_LEGEND_BOTTOM);
    check(w, worksheet_insert_chart(ws, L->post_header - 1, at, chart), "Case chart");

    chart = check_ptr(w, workbook_add_chart(w->wb, LXW_CHART_BAR), "Case chart");
    if (!chart)
        return;
    f = L->act_header + 1;
    l = L->act_header + (lxw_row_t)p->n_actions;
    snprintf(cats, sizeof cats, "=Case!$A$%lu:$A$%lu", (unsigned long)f + 1,
             (unsigned long)l + 1);
    snprintf(vals, sizeof vals, "=Case!$B$%lu:$B$%lu", (unsigned long)f + 1,
             (unsigned long)l + 1);
    s = check_ptr(w, chart_add_series(chart, cats, vals), "Case chart");
    if (s)
        chart_series_set_name(s, lop_problem_orientation(p));
    char title[160];
    snprintf(title, sizeof title, "Expected %s of each action (%s)",
             lop_problem_orientation(p), score_unit(p));
    chart_title_set_name(chart, title);
    /* In a bar chart y is the category axis: first action on top, labels at the left. */
    chart_axis_set_reverse(chart->y_axis);
    chart_axis_set_label_position(chart->y_axis, LXW_CHART_AXIS_LABEL_POSITION_LOW);
    chart_legend_set_position(chart, LXW_CHART_LEGEND_NONE);
    /* Below the first chart (15 rows high) when the tables are close together. */
    lxw_row_t row = L->act_header - 1;
    if (row < L->post_header + 15)
        row = L->post_header + 15;
    check(w, worksheet_insert_chart(ws, row, at, chart), "Case chart");
}

/* Live formulas cover finite states, named actions, and outcome-table or gaussian
 * channels; other problems get the Case sheet as values. */
static bool case_is_live(const lop_problem *p)
{
    if (p->states_kind == LOP_STATES_GRID || p->estimate)
        return false;
    for (size_t i = 0; i < p->n_channels; i++)
        if (p->channels[i].kind == LOP_CHANNEL_NOISE &&
            p->channels[i].noise != LOP_NOISE_GAUSSIAN)
            return false;
    return true;
}

/* A labelled value in A, its number in B and unit in C; returns the next row. */
static lxw_row_t value_line(xlsx_writer *w, lxw_worksheet *ws, lxw_row_t row,
                            const char *label, double v, lxw_format *fmt, const char *unit)
{
    put_text(w, ws, row, 0, label, NULL);
    put_number(w, ws, row, 1, v, fmt);
    put_text(w, ws, row, 2, unit, NULL);
    return row + 1;
}

/* The Case sheet as values: grid states, estimates, other noise families. */
static void sheet_case_values(xlsx_writer *w, lxw_worksheet *ws)
{
    const lop_problem *p = w->p;
    const lop_case_result *c = &w->r->kase;
    const char *unit = score_unit(p);
    char text[2048];
    put_text(w, ws, 0, 0, "Case: the posterior and the decision given every observed value",
             w->f.title);
    put_text(w, ws, 1, 0, "Values computed by lopside: live formulas cover finite states with "
             "named actions and outcome-table or gaussian channels.", w->f.note);
    observed_text(text, sizeof text, p);
    put_textf(w, ws, 2, 0, NULL, "Observed: %s", text);
    lxw_row_t row = 4;
    put_text(w, ws, row++, 0, "Decision for the case", w->f.heading);
    if (p->estimate) {
        row = value_line(w, ws, row, "Bayes estimate", c->bayes_estimate, w->f.live_score,
                         p->unit);
        snprintf(text, sizeof text, "Expected %s of the Bayes estimate",
                 lop_problem_orientation(p));
        row = value_line(w, ws, row, text, lop_problem_oriented(p, c->bayes_estimate_loss),
                         w->f.score, unit);
    } else {
        put_text(w, ws, row, 0, "Bayes action", w->f.bold);
        put_text(w, ws, row++, 1, p->actions[c->bayes_action], w->f.live_text);
        snprintf(text, sizeof text, "Expected %s of the Bayes action",
                 lop_problem_orientation(p));
        row = value_line(w, ws, row, text,
                         lop_problem_oriented(p, c->expected_loss[c->bayes_action]),
                         w->f.live_score, unit);
        put_text(w, ws, row, 0, "Runner-up", NULL);
        put_text(w, ws, row++, 1, p->actions[c->runner_up], NULL);
        row = value_line(w, ws, row, "Margin over the runner-up", c->margin, w->f.score, unit);
    }
    row = value_line(w, ws, row, "Value of perfect information (EVPI)", c->evpi, w->f.score,
                     unit);
    if (c->numeric) {
        static const char *const q[] = {"mean", "sd", "median", "mode", "5% quantile",
                                        "95% quantile"};
        double v[] = {c->summary.mean, c->summary.sd, c->summary.median, c->summary.mode,
                      c->summary.q05, c->summary.q95};
        row++;
        put_text(w, ws, row++, 0, "Posterior summary", w->f.heading);
        lxw_row_t h = row++;
        for (size_t i = 0; i < 6; i++, row++) {
            put_text(w, ws, row, 0, q[i], NULL);
            put_number(w, ws, row, 1, v[i], w->f.number);
        }
        names head = {0};
        names_add(w, &head, "quantity");
        names_add(w, &head, "value%s%s%s", p->unit[0] ? " (" : "", p->unit,
                  p->unit[0] ? ")" : "");
        header_and_table(w, ws, "posterior_summary", h, 0, row - 1, &head);
    }
    if (!p->estimate) {
        row++;
        put_textf(w, ws, row++, 0, w->f.heading, "Expected %s of each action",
                  lop_problem_orientation(p));
        lxw_row_t h = row++;
        for (size_t a = 0; a < p->n_actions; a++, row++) {
            put_text(w, ws, row, 0, p->actions[a], NULL);
            put_number(w, ws, row, 1, lop_problem_oriented(p, c->expected_loss[a]), w->f.score);
        }
        names head = {0};
        names_add(w, &head, "action");
        names_add(w, &head, "expected %s (%s)", lop_problem_orientation(p), unit);
        header_and_table(w, ws, "actions", h, 0, row - 1, &head);
    }
    /* Long tables side by side from column E, under one frozen header row. */
    lxw_row_t h = 5;
    lxw_col_t col = 4;
    size_t n = p->n_states < RULE_ROWS_MAX ? p->n_states : RULE_ROWS_MAX;
    put_text(w, ws, h - 1, col, "Posterior", w->f.heading);
    for (size_t s = 0; s < n; s++) {
        if (lop_problem_numeric_states(p))
            put_number(w, ws, h + 1 + (lxw_row_t)s, col, p->state_values[s], w->f.number);
        else
            put_text(w, ws, h + 1 + (lxw_row_t)s, col, p->state_labels[s], NULL);
        put_number(w, ws, h + 1 + (lxw_row_t)s, col + 1, p->prior[s], w->f.prob);
        put_number(w, ws, h + 1 + (lxw_row_t)s, col + 2, c->posterior[s], w->f.prob);
    }
    names head = {0};
    names_add(w, &head, "state%s%s%s", p->unit[0] ? " (" : "", p->unit, p->unit[0] ? ")" : "");
    names_add(w, &head, "prior");
    names_add(w, &head, "posterior");
    header_and_table(w, ws, "posterior", h, col, h + (lxw_row_t)n, &head);
    if (p->estimate) {
        col += 4;
        size_t m = p->n_estimates < RULE_ROWS_MAX ? p->n_estimates : RULE_ROWS_MAX;
        put_text(w, ws, h - 1, col, "Expected score of every estimate", w->f.heading);
        for (size_t i = 0; i < m; i++) {
            put_number(w, ws, h + 1 + (lxw_row_t)i, col, p->estimates[i], w->f.number);
            put_number(w, ws, h + 1 + (lxw_row_t)i, col + 1,
                       lop_problem_oriented(p, c->estimate_curve[i]), w->f.score);
        }
        names_add(w, &head, "estimate%s%s%s", p->unit[0] ? " (" : "", p->unit,
                  p->unit[0] ? ")" : "");
        names_add(w, &head, "expected %s (%s)", lop_problem_orientation(p), unit);
        header_and_table(w, ws, "estimate_curve", h, col, h + (lxw_row_t)m, &head);
    }
    /* The posterior against the state (numeric states) or per state. */
    lxw_chart *chart = check_ptr(w, workbook_add_chart(w->wb, lop_problem_numeric_states(p)
                                                       ? LXW_CHART_SCATTER_STRAIGHT
                                                       : LXW_CHART_COLUMN), "Case chart");
    if (!chart)
        return;
    char a[72], b[72], cats[96], vals[96];
    range(a, sizeof a, h + 1, 4, h + (lxw_row_t)n, 4);
    snprintf(cats, sizeof cats, "=Case!%s", a);
    for (lxw_col_t k = 5; k <= 6; k++) {
        range(b, sizeof b, h + 1, k, h + (lxw_row_t)n, k);
        snprintf(vals, sizeof vals, "=Case!%s", b);
        lxw_chart_series *s = check_ptr(w, chart_add_series(chart, cats, vals), "Case chart");
        if (s)
            chart_series_set_name(s, k == 5 ? "prior" : "posterior");
    }
    chart_title_set_name(chart, "Prior and posterior of each state");
    chart_legend_set_position(chart, LXW_CHART_LEGEND_BOTTOM);
    check(w, worksheet_insert_chart(ws, h, col + 3, chart), "Case chart");
    set_width(w, ws, 0, 0, 36);
    set_width(w, ws, 1, 2, 14);
    worksheet_freeze_panes(ws, h + 1, 0);
    page_setup(w, ws, -1);
    apply_widths(w, ws);
}

static void sheet_case(xlsx_writer *w, lxw_worksheet *ws)
{
    const lop_problem *p = w->p;
    if (!case_is_live(p)) {
        sheet_case_values(w, ws);
        return;
    }
    case_layout L;
    if (!plan_case(w, &L))
        return;
    char text[2048];
    put_text(w, ws, 0, 0, "Case: the posterior and the decision given every observed value",
             w->f.title);
    put_text(w, ws, 1, 0, "Shaded cells are the problem file's numbers; edit one and the "
             "posterior, the expected scores and the Bayes action below follow (and the "
             "Summary's headline).", w->f.note);
    observed_text(text, sizeof text, p);
    put_textf(w, ws, 2, 0, NULL, "Observed: %s", text);
    if (L.n_obs && !L.live_obs)
        put_textf(w, ws, 3, 0, w->f.note, "%zu observations are too many to show one per "
                  "row: the ln likelihood column holds values, not formulas.", L.n_obs);
    case_evidence_model(w, ws, &L);
    case_observations(w, ws, &L);
    case_posterior(w, ws, &L);
    case_scores(w, ws, &L);
    case_actions(w, ws, &L);
    case_decision(w, ws, &L);
    case_charts(w, ws, &L);
    set_width(w, ws, 0, 0, 36);
    set_width(w, ws, 1, (lxw_col_t)(L.width - 1), 12);
    worksheet_freeze_panes(ws, 3, 0);
    page_setup(w, ws, -1);
    apply_widths(w, ws);
    free(L.model_header);
}

/* --- the Rule sheet: values from lopside ------------------------------------------------- */

/* Tables of the Rule sheet stand side by side with their headers on one frozen row. */
typedef struct {
    lxw_row_t header;
    lxw_col_t next_col;        /* first free column */
    lxw_row_t grid_first;      /* rule_grid: first data row, and columns of x and number */
    lxw_col_t grid_x, grid_number;
    size_t grid_rows;          /* table rows of the rule shown on the grid */
    size_t grid_points;        /* points per table row shown */
    lxw_row_t table_first;     /* rule_table: first data row and probability column */
    lxw_col_t table_row_col, table_prob;
    size_t table_rows;
} rule_layout;

static const lop_channel *numeric_channel(const lop_problem *p, const lop_rule_result *rule)
{
    return rule->numeric_channel >= 0 ? &p->channels[rule->numeric_channel] : NULL;
}

/* The measurement's name: "ear", or "mean of ear (4 repeats)". */
static void measurement_name(char *buf, size_t size, const lop_channel *c)
{
    if (c->repeats > 1)
        snprintf(buf, size, "mean of %s (%zu repeats)", lop_report_channel_name(c), c->repeats);
    else
        snprintf(buf, size, "%s", lop_report_channel_name(c));
}

static void rule_switch_points(xlsx_writer *w, lxw_worksheet *ws, rule_layout *L)
{
    const lop_problem *p = w->p;
    const lop_rule_result *rule = &w->r->rule;
    const lop_channel *c = numeric_channel(p, rule);
    if (!c || p->estimate)
        return;
    lxw_col_t c0 = L->next_col;
    if (!rule->n_switches) {
        put_text(w, ws, L->header - 1, c0, "Switch points: none, one action at every "
                 "measurement", w->f.heading);
        L->next_col = c0 + 5;
        return;
    }
    put_text(w, ws, L->header - 1, c0, "Switch points", w->f.heading);
    bool rows = rule->n_columns > 0;
    char name[160], given[1024];
    measurement_name(name, sizeof name, c);
    names head = {0};
    if (rows) {
        names_add(w, &head, "row");
        names_add(w, &head, "given");
    }
    names_add(w, &head, "x: %s", name);
    names_add(w, &head, "below x");
    names_add(w, &head, "above x");
    for (size_t k = 0; k < rule->n_switches; k++) {
        const lop_switch_point *sp = &rule->switches[k];
        lxw_row_t row = L->header + 1 + (lxw_row_t)k;
        lxw_col_t col = c0;
        if (rows) {
            lop_report_row_given(given, sizeof given, p, rule, sp->row);
            put_number(w, ws, row, col++, (double)(sp->row + 1), w->f.count);
            put_text(w, ws, row, col++, given, NULL);
        }
        put_number(w, ws, row, col++, sp->x, w->f.switch_x);
        put_text(w, ws, row, col++, p->actions[sp->from], NULL);
        put_text(w, ws, row, col++, p->actions[sp->to], NULL);
    }
    size_t n = head.n;
    if (rows) {
        set_width(w, ws, c0, c0, 6);
        set_width(w, ws, c0 + 1, c0 + 1, 28);
        set_width(w, ws, c0 + 2, c0 + 4, 16);
    } else {
        set_width(w, ws, c0, c0 + 2, 16);
    }
    header_and_table(w, ws, "switch_points", L->header, c0,
                     L->header + (lxw_row_t)rule->n_switches, &head);
    L->next_col = (lxw_col_t)(c0 + n + 1);
}

static void rule_table(xlsx_writer *w, lxw_worksheet *ws, rule_layout *L)
{
    const lop_problem *p = w->p;
    const lop_rule_result *rule = &w->r->rule;
    if (!rule->n_columns)
        return;
    bool decided = rule->numeric_channel < 0 && !p->estimate && rule->row_action;
    size_t n_rows = rule->n_rows < RULE_ROWS_MAX ? rule->n_rows : RULE_ROWS_MAX;
    w->rule_truncated |= n_rows < rule->n_rows;
    lxw_col_t c0 = L->next_col;
    put_text(w, ws, L->header - 1, c0, decided ? "Outcome combinations and the Bayes action"
                                               : "Outcome combinations (rows of the rule)",
             w->f.heading);
    names head = {0};
    names_add(w, &head, "row");
    for (size_t i = 0; i < p->n_channels; i++) {
        const lop_channel *c = &p->channels[i];
        if (c->kind != LOP_CHANNEL_TABLE)
            continue;
        if (c->repeats == 1)
            names_add(w, &head, "%s", lop_report_channel_name(c));
        else
            for (size_t o = 0; o < c->n_outcomes; o++)
                names_add(w, &head, "%s: %s (count)", lop_report_channel_name(c),
                          c->outcomes[o]);
    }
    names_add(w, &head, "probability");
    if (decided) {
        names_add(w, &head, "Bayes action");
        names_add(w, &head, "expected %s (%s)", lop_problem_orientation(p), score_unit(p));
    }
    for (size_t r = 0; r < n_rows; r++) {
        lxw_row_t row = L->header + 1 + (lxw_row_t)r;
        lxw_col_t col = c0;
        put_number(w, ws, row, col++, (double)(r + 1), w->f.count);
        size_t k = 0;
        for (size_t i = 0; i < p->n_channels; i++) {
            const lop_channel *c = &p->channels[i];
            if (c->kind != LOP_CHANNEL_TABLE)
                continue;
            const size_t *counts = &rule->counts[r * rule->n_columns + k];
            for (size_t o = 0; o < c->n_outcomes; o++) {
                if (c->repeats > 1)
                    put_number(w, ws, row, col++, (double)counts[o], w->f.count);
                else if (counts[o])
                    put_text(w, ws, row, col++, c->outcomes[o], NULL);
            }
            k += c->n_outcomes;
        }
        L->table_prob = col;
        put_number(w, ws, row, col++, rule->row_probability[r], w->f.prob);
        if (decided) {
            put_text(w, ws, row, col++, p->actions[rule->row_action[r]], NULL);
            put_number(w, ws, row, col++, lop_problem_oriented(p, rule->row_expected_loss[r]),
                       w->f.score);
        }
    }
    size_t n = head.n;
    set_width(w, ws, c0, c0, 6);
    set_width(w, ws, c0 + 1, (lxw_col_t)(c0 + n - 1), 16);
    header_and_table(w, ws, "rule_table", L->header, c0, L->header + (lxw_row_t)n_rows,
                     &head);
    L->table_first = L->header + 1;
    L->table_row_col = c0;
    L->table_rows = n_rows;
    L->next_col = (lxw_col_t)(c0 + n + 1);
}

static void rule_grid(xlsx_writer *w, lxw_worksheet *ws, rule_layout *L)
{
    const lop_problem *p = w->p;
    const lop_rule_result *rule = &w->r->rule;
    const lop_channel *c = numeric_channel(p, rule);
    if (!c || !rule->n_grid || (p->estimate ? !rule->grid_estimate : !rule->grid_action))
        return;
    size_t rows = rule->n_rows, points = rule->n_grid;
    if (rows * points > RULE_ROWS_MAX) {
        /* Whole rows of the rule while they fit; at least part of the first. */
        rows = RULE_ROWS_MAX / points;
        if (rows == 0) {
            rows = 1;
            points = RULE_ROWS_MAX;
        }
        w->rule_truncated = true;
    }
    bool with_rows = rule->n_columns > 0;
    lxw_col_t c0 = L->next_col;
    put_text(w, ws, L->header - 1, c0, "The Bayes action at each measurement", w->f.heading);
    char name[160], given[1024];
    measurement_name(name, sizeof name, c);
    names head = {0};
    if (with_rows) {
        names_add(w, &head, "row");
        names_add(w, &head, "given");
    }
    names_add(w, &head, "x: %s", name);
    if (p->estimate) {
        names_add(w, &head, "Bayes estimate%s%s%s", p->unit[0] ? " (" : "", p->unit,
                  p->unit[0] ? ")" : "");
    } else {
        names_add(w, &head, "Bayes action");
        names_add(w, &head, "action number");
    }
    lxw_row_t row = L->header + 1;
    for (size_t r = 0; r < rows; r++) {
        if (with_rows)
            lop_report_row_given(given, sizeof given, p, rule, r);
        for (size_t i = 0; i < points; i++, row++) {
            lxw_col_t col = c0;
            if (with_rows) {
                put_number(w, ws, row, col++, (double)(r + 1), w->f.count);
                put_text(w, ws, row, col++, given, NULL);
            }
            put_number(w, ws, row, col++, rule->grid[i], w->f.grid_x);
            if (p->estimate) {
                put_number(w, ws, row, col++, rule->grid_estimate[r * rule->n_grid + i],
                           w->f.number);
                continue;
            }
            size_t a = rule->grid_action[r * rule->n_grid + i];
            put_text(w, ws, row, col++, p->actions[a], NULL);
            put_number(w, ws, row, col++, (double)(a + 1), w->f.count);
        }
    }
    size_t n = head.n;
    L->grid_first = L->header + 1;
    L->grid_x = (lxw_col_t)(c0 + (with_rows ? 2 : 0));
    L->grid_number = (lxw_col_t)(L->grid_x + (p->estimate ? 1 : 2));
    L->grid_rows = rows;
    L->grid_points = points;
    if (with_rows) {
        set_width(w, ws, c0, c0, 6);
        set_width(w, ws, c0 + 1, c0 + 1, 28);
    }
    set_width(w, ws, L->grid_x, L->grid_number, 16);
    header_and_table(w, ws, "rule_grid", L->header, c0, row - 1, &head);
    L->next_col = (lxw_col_t)(c0 + n + 1);
}

/* The action number against the measurement, one line per row of the rule; or, without a
 * numeric channel, the probability of each outcome combination. */
static void rule_chart(xlsx_writer *w, lxw_worksheet *ws, rule_layout *L)
{
    const lop_problem *p = w->p;
    const lop_rule_result *rule = &w->r->rule;
    char cats[96], vals[96], a[72], b[72], title[256], given[1024];
    lxw_chart *chart;
    if (L->grid_rows) {
        chart = check_ptr(w, workbook_add_chart(w->wb, LXW_CHART_SCATTER_STRAIGHT), "Rule chart");
        if (!chart)
            return;
        for (size_t r = 0; r < L->grid_rows && r < CHART_SERIES_MAX; r++) {
            lxw_row_t f = L->grid_first + (lxw_row_t)(r * L->grid_points);
            lxw_row_t l = f + (lxw_row_t)L->grid_points - 1;
            range(a, sizeof a, f, L->grid_x, l, L->grid_x);
            range(b, sizeof b, f, L->grid_number, l, L->grid_number);
            snprintf(cats, sizeof cats, "=Rule!%s", a);
            snprintf(vals, sizeof vals, "=Rule!%s", b);
            lxw_chart_series *s = check_ptr(w, chart_add_series(chart, cats, vals), "Rule chart");
            if (!s)
                return;
            if (rule->n_columns) {
                lop_report_row_given(given, sizeof given, p, rule, r);
                chart_series_set_name(s, given);
            } else {
                chart_series_set_name(s, "Bayes action");
            }
        }
        measurement_name(title, sizeof title, numeric_channel(p, rule));
        chart_axis_set_name(chart->x_axis, title);
        if (p->estimate) {
            chart_axis_set_name(chart->y_axis, "Bayes estimate");
            chart_title_set_name(chart, "The Bayes estimate at each measurement");
            chart_legend_set_position(chart, rule->n_columns ? LXW_CHART_LEGEND_BOTTOM
                                                             : LXW_CHART_LEGEND_NONE);
            goto insert;
        }
        chart_axis_set_name(chart->y_axis, "action number");
        chart_axis_set_min(chart->y_axis, 0);
        chart_axis_set_max(chart->y_axis, (double)p->n_actions + 1);
        chart_axis_set_major_unit(chart->y_axis, 1);
        size_t at = 0;
        at += (size_t)snprintf(title, sizeof title, "The Bayes action at each measurement (");
        for (size_t k = 0; k < p->n_actions && at < sizeof title; k++)
            at += (size_t)snprintf(title + at, sizeof title - at, "%s%zu = %s", k ? ", " : "",
                                   k + 1, p->actions[k]);
        if (at < sizeof title)
            snprintf(title + at, sizeof title - at, ")");
        chart_title_set_name(chart, title);
        chart_legend_set_position(chart, rule->n_columns ? LXW_CHART_LEGEND_BOTTOM
                                                         : LXW_CHART_LEGEND_NONE);
    } else if (L->table_rows) {
        chart = check_ptr(w, workbook_add_chart(w->wb, LXW_CHART_COLUMN), "Rule chart");
        if (!chart)
            return;
        size_t n = L->table_rows < 200 ? L->table_rows : 200;
        range(a, sizeof a, L->table_first, L->table_row_col,
              L->table_first + (lxw_row_t)n - 1, L->table_row_col);
        range(b, sizeof b, L->table_first, L->table_prob, L->table_first + (lxw_row_t)n - 1,
              L->table_prob);
        snprintf(cats, sizeof cats, "=Rule!%s", a);
        snprintf(vals, sizeof vals, "=Rule!%s", b);
        lxw_chart_series *s = check_ptr(w, chart_add_series(chart, cats, vals), "Rule chart");
        if (!s)
            return;
        chart_series_set_name(s, "probability");
        chart_title_set_name(chart, "Probability of each outcome combination (row)");
        chart_axis_set_name(chart->x_axis, "row");
        chart_axis_set_name(chart->y_axis, "probability");
        chart_legend_set_position(chart, LXW_CHART_LEGEND_NONE);
    } else {
        return;
    }
insert:;
    lxw_chart_options opt = {.x_scale = 1.4, .y_scale = 1.2};
    check(w, worksheet_insert_chart_opt(ws, L->header, L->next_col, chart, &opt), "Rule chart");
}

static void sheet_rule(xlsx_writer *w, lxw_worksheet *ws)
{
    const lop_problem *p = w->p;
    const lop_rule_result *rule = &w->r->rule;
    const char *unit = score_unit(p);
    put_text(w, ws, 0, 0, "Rule: the Bayes decision for every possible measurement",
             w->f.title);
    put_text(w, ws, 1, 0, "Values computed by lopside, not formulas: they do not follow edits "
             "on the Case sheet.", w->f.note);
    /* Labels overflow to the right across empty cells; values sit in column E. */
    lxw_row_t row = 3;
    if (rule->computed) {
        put_textf(w, ws, row, 0, NULL, "Bayes %s of the rule", p->payoff ? "payoff" : "risk");
        put_number(w, ws, row, 4, lop_problem_oriented(p, rule->bayes_risk), w->f.live_score);
        put_textf(w, ws, row++, 5, NULL, "%s per decision", unit);
    } else {
        put_text(w, ws, row, 0, "Not computed:", NULL);
        put_text(w, ws, row++, 4, rule->not_computed_why, NULL);
    }
    put_textf(w, ws, row, 0, NULL, "Deciding on the prior alone%s%s%s",
              p->estimate ? "" : " (always ", p->estimate ? "" : p->actions[rule->prior_only_action],
              p->estimate ? "" : ")");
    put_number(w, ws, row, 4, lop_problem_oriented(p, rule->prior_only_risk), w->f.score);
    put_textf(w, ws, row++, 5, NULL, "%s per decision", unit);
    if (rule->computed) {
        put_text(w, ws, row, 0, "Value of the evidence", NULL);
        put_number(w, ws, row, 4, rule->prior_only_risk - rule->bayes_risk, w->f.score);
        put_textf(w, ws, row++, 5, NULL, "%s per decision", unit);
    }
    if (!rule->computed) {
        set_width(w, ws, 0, 3, 12);
        set_width(w, ws, 4, 4, 60);
        page_setup(w, ws, -1);
        apply_widths(w, ws);
        return;
    }
    rule_layout L = {.header = 9};
    rule_switch_points(w, ws, &L);
    rule_table(w, ws, &L);
    rule_grid(w, ws, &L);
    rule_chart(w, ws, &L);
    if (w->rule_truncated)
        put_textf(w, ws, 7, 0, w->f.note, "The tables below stop at %d rows; the CSV folder "
                  "and the JSON hold every row.", RULE_ROWS_MAX);
    worksheet_freeze_panes(ws, L.header + 1, 0);
    page_setup(w, ws, (int)L.header);
    apply_widths(w, ws);
}

/* --- the Summary sheet ---------------------------------------------------------------- */

/* Columns A to D of the Summary hold about this many characters in all. */
#define SUMMARY_LINE_CHARS 130

/* A paragraph over columns A to D, wrapped, its row tall enough for its lines. */
static lxw_row_t paragraph(xlsx_writer *w, lxw_worksheet *ws, lxw_row_t row, const char *text)
{
    size_t lines = strlen(text) / SUMMARY_LINE_CHARS + 1;
    check(w, worksheet_merge_range(ws, row, 0, row, 3, text, w->f.wrap), ws->name);
    if (lines > 1)
        check(w, worksheet_set_row(ws, row, 15.0 * (double)lines, NULL), ws->name);
    return row + 1;
}

static lxw_row_t paragraphf(xlsx_writer *w, lxw_worksheet *ws, lxw_row_t row,
                            const char *fmt, ...) __attribute__((format(printf, 4, 5)));

static lxw_row_t paragraphf(xlsx_writer *w, lxw_worksheet *ws, lxw_row_t row,
                            const char *fmt, ...)
{
    char buf[2048];
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(buf, sizeof buf, fmt, ap);
    va_end(ap);
    return paragraph(w, ws, row, buf);
}

/* One line of "The problem": label in A, text in B (overflowing to the right). */
static lxw_row_t summary_line(xlsx_writer *w, lxw_worksheet *ws, lxw_row_t row,
                              const char *label, const char *text)
{
    put_text(w, ws, row, 0, label, w->f.bold);
    put_text(w, ws, row, 1, text, NULL);
    return row + 1;
}

static lxw_row_t summary_problem(xlsx_writer *w, lxw_worksheet *ws, lxw_row_t row)
{
    const lop_problem *p = w->p;
    char text[2048], list[1024];
    put_text(w, ws, row++, 0, "The problem", w->f.heading);
    if (p->states_kind != LOP_STATES_GRID)
        list_text(list, sizeof list, p->state_labels, p->n_states, 12);
    if (p->states_kind == LOP_STATES_GRID)
        snprintf(text, sizeof text, "a grid of %zu points from %.6g to %.6g%s%s, spacing %.6g",
                 p->n_states, p->state_values[0], p->state_values[p->n_states - 1],
                 p->unit[0] ? " " : "", p->unit, p->step);
    else
        snprintf(text, sizeof text, "%zu %s states%s%s%s: %s", p->n_states,
                 p->states_kind == LOP_STATES_VALUES ? "numeric" : "named",
                 p->unit[0] ? " (" : "", p->unit, p->unit[0] ? ")" : "", list);
    row = summary_line(w, ws, row, "States", text);
    size_t at = 0;
    for (size_t s = 0; s < p->n_states && s < 12 && at < sizeof text; s++)
        at += (size_t)snprintf(text + at, sizeof text - at, "%s%.6g", s ? ", " : "", p->prior[s]);
    if (p->n_states > 12 && at < sizeof text)
        snprintf(text + at, sizeof text - at, ", ... (the Case sheet has all)");
    row = summary_line(w, ws, row, "Prior", text);
    for (size_t i = 0; i < p->n_channels; i++) {
        const lop_channel *c = &p->channels[i];
        char label[160];
        snprintf(label, sizeof label, "Evidence: %s", lop_report_channel_name(c));
        if (c->kind == LOP_CHANNEL_TABLE) {
            list_text(list, sizeof list, c->outcomes, c->n_outcomes, 12);
            snprintf(text, sizeof text, "outcomes %s; %zu repeat%s", list, c->repeats,
                     c->repeats == 1 ? "" : "s");
        } else {
            snprintf(text, sizeof text, "%s noise around a center per state; %zu repeat%s",
                     lop_report_noise_name(c), c->repeats, c->repeats == 1 ? "" : "s");
        }
        row = summary_line(w, ws, row, label, text);
    }
    char observed[1024];
    observed_text(observed, sizeof observed, p);
    row = summary_line(w, ws, row, "Observed", observed);
    if (p->estimate)
        snprintf(list, sizeof list, "an estimate of the state, on %zu points from %.6g to %.6g",
                 p->n_estimates, p->estimates[0], p->estimates[p->n_estimates - 1]);
    else
        list_text(list, sizeof list, p->actions, p->n_actions, 12);
    row = summary_line(w, ws, row, "Actions", list);
    snprintf(text, sizeof text, "%s in %s: the Bayes action has the %s expected %s",
             lop_problem_orientation(p), score_unit(p), p->payoff ? "largest" : "smallest",
             lop_problem_orientation(p));
    row = summary_line(w, ws, row, "Scores", text);
    return row + 1;
}

/* One headline quantity: a live formula citing the Case sheet, or a value. Its value cell
 * gets the defined name `name`. */
static lxw_row_t headline(xlsx_writer *w, lxw_worksheet *ws, lxw_row_t row, const char *name,
                          const char *quantity, const char *live_ref, const char *text,
                          double value, const char *unit, const char *how)
{
    put_text(w, ws, row, 0, quantity, NULL);
    if (live_ref && w->kase.live) {
        char formula[64];
        snprintf(formula, sizeof formula, "=%s", live_ref);
        if (text)
            put_formula_text(w, ws, row, 1, formula, w->f.live_text, text);
        else
            put_formula(w, ws, row, 1, formula, w->f.live_score, value);
    } else if (text) {
        put_text(w, ws, row, 1, text, w->f.bold);
    } else {
        put_number(w, ws, row, 1, value, w->f.live_score);
    }
    put_text(w, ws, row, 2, unit, NULL);
    put_text(w, ws, row, 3, how, NULL);
    if (name) {
        char cell[72];
        snprintf(cell, sizeof cell, "=Summary!$B$%lu", (unsigned long)row + 1);
        check(w, workbook_define_name(w->wb, name, cell), "defined names");
        size_t at = strlen(w->defined);
        snprintf(w->defined + at, sizeof w->defined - at, "%s%s", at ? ", " : "", name);
    }
    return row + 1;
}

static lxw_row_t summary_headline(xlsx_writer *w, lxw_worksheet *ws, lxw_row_t row)
{
    const lop_problem *p = w->p;
    const lop_results *r = w->r;
    const lop_case_result *c = &r->kase;
    const char *unit = score_unit(p);
    char per[96], q[160], how[256];
    snprintf(per, sizeof per, "%s per decision", unit);
    put_text(w, ws, row++, 0, "Headline", w->f.heading);
    lxw_row_t h = row++;
    const char *orient = lop_problem_orientation(p);
    const char *live = "live: follows the Case sheet";
    if (!w->kase.live)
        live = "value computed by lopside (Case sheet)";
    if (p->estimate) {
        row = headline(w, ws, row, "bayes_estimate", "Bayes estimate for the case", NULL, NULL,
                       c->bayes_estimate, p->unit, live);
        snprintf(q, sizeof q, "Expected %s of the Bayes estimate", orient);
        row = headline(w, ws, row, p->payoff ? "case_expected_payoff" : "case_expected_loss",
                       q, NULL, NULL, lop_problem_oriented(p, c->bayes_estimate_loss), unit,
                       live);
    } else {
        row = headline(w, ws, row, "bayes_action", "Bayes action for the case",
                       w->kase.bayes_action, p->actions[c->bayes_action], 0, "", live);
        snprintf(q, sizeof q, "Expected %s of the Bayes action", orient);
        row = headline(w, ws, row, p->payoff ? "case_expected_payoff" : "case_expected_loss",
                       q, w->kase.bayes_score, NULL,
                       lop_problem_oriented(p, c->expected_loss[c->bayes_action]), unit, live);
        row = headline(w, ws, row, "runner_up", "Runner-up", w->kase.runner_up,
                       p->actions[c->runner_up], 0, "", live);
        row = headline(w, ws, row, "margin", "Margin over the runner-up", w->kase.margin, NULL,
                       c->margin, unit, live);
    }
    if (!p->estimate && c->n_tied > 1) {
        char ties[512];
        size_t at = 0;
        ties[0] = '\0';
        for (size_t t = 0; t < c->n_tied && at < sizeof ties; t++)
            at += (size_t)snprintf(ties + at, sizeof ties - at, "%s%s", t ? ", " : "",
                                   p->actions[c->tied[t]]);
        row = headline(w, ws, row, NULL, "Tied (expected scores within rounding)", NULL, ties,
                       0, "", "value at the file's numbers; the earlier action is chosen");
    }
    row = headline(w, ws, row, "evpi", "Value of perfect information for the case (EVPI)",
                   w->kase.evpi, NULL, c->evpi, unit, live);
    if (r->has_rule) {
        const lop_rule_result *rule = &r->rule;
        const char *computed = "value computed by lopside (Rule sheet)";
        if (rule->computed) {
            snprintf(q, sizeof q, "Bayes %s of the rule", p->payoff ? "payoff" : "risk");
            row = headline(w, ws, row, p->payoff ? "bayes_payoff" : "bayes_risk", q, NULL,
                           NULL, lop_problem_oriented(p, rule->bayes_risk), per, computed);
        } else {
            row = headline(w, ws, row, NULL, "Rule", NULL, "not computed", 0, "",
                           rule->not_computed_why);
        }
        snprintf(how, sizeof how, "%s%s%s", computed, p->estimate ? "" : "; always ",
                 p->estimate ? "" : p->actions[rule->prior_only_action]);
        row = headline(w, ws, row, p->payoff ? "prior_only_payoff" : "prior_only_risk",
                       "Deciding on the prior alone", NULL, NULL,
                       lop_problem_oriented(p, rule->prior_only_risk), per, how);
        if (!p->estimate)
            row = headline(w, ws, row, "prior_only_action", "Action on the prior alone", NULL,
                           p->actions[rule->prior_only_action], 0, "", computed);
        if (rule->computed)
            row = headline(w, ws, row, "value_of_evidence", "Value of the evidence", NULL, NULL,
                           rule->prior_only_risk - rule->bayes_risk, per,
                           "prior-only risk minus Bayes risk; value computed by lopside");
    }
    names head = {0};
    names_add(w, &head, "quantity");
    names_add(w, &head, "value");
    names_add(w, &head, "unit");
    names_add(w, &head, "how it is computed");
    header_and_table(w, ws, "headline", h, 0, row - 1, &head);
    return row + 1;
}

static lxw_row_t summary_live(xlsx_writer *w, lxw_worksheet *ws, lxw_row_t row)
{
    put_text(w, ws, row++, 0, "Live cells", w->f.heading);
    if (!w->kase.live) {
        row = paragraph(w, ws, row, "None for this kind of problem: live formulas cover finite "
                        "states with named actions and outcome-table or gaussian channels. "
                        "Every number in this workbook is a value computed by lopside.");
        return paragraphf(w, ws, row, "Formulas may cite the headline values by their "
                          "defined names: %s.", w->defined) + 1;
    }
    row = paragraph(w, ws, row, "On the Case sheet the shaded cells (prior, evidence model, "
                    "observed values, and the loss or payoff table) feed formulas: "
                    "log-likelihoods, posterior, expected scores, the Bayes action, runner-up, "
                    "margin and EVPI. The headline rows marked live cite those cells, so a "
                    "collaborator who edits a cell there sees the decision change here.");
    row = paragraph(w, ws, row, "Everything else (the rule, its risks, the Rule sheet) is a "
                    "value computed by lopside from the problem file as given.");
    row = paragraphf(w, ws, row, "Formulas elsewhere may cite the headline values by their "
                     "defined names: %s.", w->defined);
    return row + 1;
}

static lxw_row_t summary_warnings(xlsx_writer *w, lxw_worksheet *ws, lxw_row_t row)
{
    put_text(w, ws, row++, 0, "Warnings", w->f.heading);
    if (!w->r->n_warnings)
        put_text(w, ws, row++, 0, "none", NULL);
    for (size_t i = 0; i < w->r->n_warnings; i++)
        row = paragraphf(w, ws, row, "- %s", w->r->warnings[i]);
    return row + 1;
}

static lxw_row_t summary_cautions(xlsx_writer *w, lxw_worksheet *ws, lxw_row_t row)
{
    put_text(w, ws, row++, 0, "Cautions", w->f.heading);
    row = paragraph(w, ws, row, "Payoff schedules with aversive outcomes for animals or "
                    "people (time-outs, air puffs, shocks, loss of earned money) need approval "
                    "under your institution's animal-care or human-subjects rules before use.");
    row = paragraph(w, ws, row, "lopside is not medical, veterinary or safety advice; local "
                    "rules and licensed practice decide.");
    row = paragraph(w, ws, row, "The numbers are only as good as the model in the problem "
                    "file: a prior, noise model or loss that does not fit gives an exact answer "
                    "to the wrong question.");
    return row + 1;
}

static lxw_row_t summary_provenance(xlsx_writer *w, lxw_worksheet *ws, lxw_row_t row)
{
    const lop_provenance *prov = w->prov;
    put_text(w, ws, row++, 0, "Provenance", w->f.heading);
    row = summary_line(w, ws, row, "Tool", "lopside " LOP_VERSION);
    row = summary_line(w, ws, row, "Input", prov->input_path);
    row = summary_line(w, ws, row, "Input SHA-256", prov->sha256);
    row = summary_line(w, ws, row, "Generated (UTC)", prov->generated);
    if (prov->has_seed) {
        char seed[32];
        snprintf(seed, sizeof seed, "%llu", prov->seed);
        row = summary_line(w, ws, row, "Seed", seed);
    }
    return row + 1;
}

static lxw_row_t summary_sheets(xlsx_writer *w, lxw_worksheet *ws, lxw_row_t row)
{
    put_text(w, ws, row++, 0, "Sheets", w->f.heading);
    row = summary_line(w, ws, row, "Case", "evidence model, observations, posterior, the "
                       "loss or payoff table and expected scores, as live formulas; charts");
    if (w->r->has_rule)
        row = summary_line(w, ws, row, "Rule", "the Bayes action for every outcome "
                           "combination and measurement, switch points, risks; a chart");
    if (w->prov->input_text)
        row = summary_line(w, ws, row, "Inputs", "the problem file as given, line by line");
    return row;
}

static void sheet_summary(xlsx_writer *w, lxw_worksheet *ws)
{
    const lop_problem *p = w->p;
    put_text(w, ws, 0, 0, p->title, w->f.title);
    lxw_row_t row = 1;
    if (p->notes[0])
        row = paragraph(w, ws, row, p->notes);
    row++;
    row = summary_problem(w, ws, row);
    row = summary_headline(w, ws, row);
    row = summary_live(w, ws, row);
    row = summary_warnings(w, ws, row);
    row = summary_cautions(w, ws, row);
    row = summary_provenance(w, ws, row);
    summary_sheets(w, ws, row);
    set_width(w, ws, 0, 0, 46);
    set_width(w, ws, 1, 1, 22);
    set_width(w, ws, 2, 2, 22);
    set_width(w, ws, 3, 3, 48);
    page_setup(w, ws, -1);
    apply_widths(w, ws);
}

/* --- the Inputs sheet ------------------------------------------------------------------ */

static void sheet_inputs(xlsx_writer *w, lxw_worksheet *ws)
{
    const char *text = w->prov->input_text;
    size_t len = w->prov->input_len;
    put_textf(w, ws, 0, 0, w->f.title, "The problem file as given: %s", w->prov->input_path);
    if (len >= 3 && memcmp(text, "\xEF\xBB\xBF", 3) == 0) {
        text += 3;
        len -= 3;
    }
    lxw_row_t row = 2;
    size_t widest = 20;
    char *line = check_ptr(w, malloc(len + 1), "Inputs sheet");
    if (!line)
        return;
    for (size_t at = 0, n = 1; at < len; n++, row++) {
        size_t end = at;
        while (end < len && text[end] != '\n')
            end++;
        size_t k = end - at;
        memcpy(line, text + at, k);
        if (k && line[k - 1] == '\r')
            k--;
        line[k] = '\0';
        put_number(w, ws, row, 0, (double)n, w->f.count);
        put_text(w, ws, row, 1, line, w->f.text);
        if (k > widest)
            widest = k;
        at = end + 1;
    }
    free(line);
    names head = {0};
    names_add(w, &head, "line");
    names_add(w, &head, "text");
    header_and_table(w, ws, "inputs", 1, 0, row - 1, &head);
    set_width(w, ws, 0, 0, 7);
    set_width(w, ws, 1, 1, widest < 110 ? (double)widest + 2 : 112);
    worksheet_freeze_panes(ws, 2, 0);
    page_setup(w, ws, 1);
    apply_widths(w, ws);
}

/* --- the workbook -------------------------------------------------------------------- */

static void write_workbook(xlsx_writer *w)
{
    const lop_problem *p = w->p;
    char comments[512];
    snprintf(comments, sizeof comments, "Written by lopside %s from %s (SHA-256 %s) at %s",
             LOP_VERSION, w->prov->input_path, w->prov->sha256, w->prov->generated);
    lxw_doc_properties props = {.title = p->title, .comments = comments};
    check(w, workbook_set_properties(w->wb, &props), "document properties");
    make_formats(w);
    /* Sheets in reading order; filled in the order that lets the Summary cite the Case. */
    lxw_worksheet *summary = check_ptr(w, workbook_add_worksheet(w->wb, "Summary"), "Summary");
    lxw_worksheet *kase = check_ptr(w, workbook_add_worksheet(w->wb, "Case"), "Case");
    lxw_worksheet *rule = NULL, *inputs = NULL;
    if (w->r->has_rule)
        rule = check_ptr(w, workbook_add_worksheet(w->wb, "Rule"), "Rule");
    if (w->prov->input_text)
        inputs = check_ptr(w, workbook_add_worksheet(w->wb, "Inputs"), "Inputs");
    if (w->error != LXW_NO_ERROR)
        return;
    sheet_case(w, kase);
    sheet_summary(w, summary);
    if (rule)
        sheet_rule(w, rule);
    if (inputs)
        sheet_inputs(w, inputs);
    worksheet_activate(summary);
}

/* Flushes the closed file at path to disk; returns 0, or -1 with errno set. */
static int sync_path(const char *path)
{
    int fd = open(path, O_RDONLY);
    if (fd < 0)
        return -1;
    int rc = fsync(fd);
    int e = errno;
    close(fd);
    errno = e;
    return rc;
}

lop_status lop_report_xlsx(const char *path, const lop_problem *p, const lop_results *r,
                           const lop_provenance *prov, lop_error *err)
{
    lop_outfile out;
    if (lop_outfile_open(&out, path, err) != LOP_OK)
        return LOP_ERUN;
    /* The empty temporary is closed; libxlsxwriter rewrites it by name. */
    if (lop_outfile_finish(&out, err) != LOP_OK)
        return LOP_ERUN;
    xlsx_writer w = {.p = p, .r = r, .prov = prov, .error = LXW_NO_ERROR};
    w.wb = workbook_new(out.tmp_path);
    if (!w.wb) {
        lop_outfile_abandon(&out);
        return lop_error_run(err, "cannot write %s: libxlsxwriter could not start a workbook",
                             path);
    }
    write_workbook(&w);
    lxw_error closed = workbook_close(w.wb); /* writes and frees, even after a failure */
    if (w.error != LXW_NO_ERROR) {
        lop_outfile_abandon(&out);
        return lop_error_run(err, "cannot write %s: %s (while writing %s)", path,
                             lxw_strerror(w.error), w.failed_at);
    }
    if (closed != LXW_NO_ERROR) {
        lop_outfile_abandon(&out);
        return lop_error_run(err, "cannot write %s: %s", path, lxw_strerror(closed));
    }
    if (sync_path(out.tmp_path) != 0) {
        int e = errno;
        lop_outfile_abandon(&out);
        return lop_error_run(err, "cannot write %s: %s", path, strerror(e));
    }
    return lop_outfile_commit(&out, err);
}
