/* lopside: the command line. Parses arguments, runs the pipeline
 * config -> problem -> engine -> results -> writers, and alone prints errors. */
#include <getopt.h>
#include <signal.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>
#include <unistd.h>

#include <gsl/gsl_errno.h>

#include "lopside/studies/accuracy.h"
#include "lopside/input/config.h"
#include "lopside/input/demo.h"
#include "lopside/input/keys.h"
#include "lopside/util/outfile.h"
#include "lopside/model/problem.h"
#include "lopside/util/progress.h"
#include "lopside/util/provenance.h"
#include "lopside/report/report.h"
#include "lopside/studies/simulate.h"
#include "lopside/util/strutil.h"

enum { EXIT_DONE = 0, EXIT_RUNTIME = 1, EXIT_USAGE = 2 };

typedef struct {
    const char *json, *workbook, *csv;
    const char *default_workbook;  /* written when neither option nor [output] names one */
    int quiet;
} run_options;

static const char usage_main[] =
    "Usage: lopside COMMAND [OPTIONS]\n"
    "\n"
    "Decision analysis for choices whose costs are lopsided: reads a problem file\n"
    "(states, prior, evidence, actions, loss or payoff) and reports the Bayes action,\n"
    "its expected loss, the decision rule over every measurement and its risk, the\n"
    "value of information, sweeps, designs and simulated sessions, as text, JSON, CSV\n"
    "and an XLSX workbook.\n"
    "\n"
    "Commands:\n"
    "  run FILE     solve the problem in FILE and print the report\n"
    "  check FILE   validate FILE and print the problem as understood (exit 0 or 2)\n"
    "  demo         solve the built-in tone-detection example\n"
    "  keys         print every section and key of the problem format, with its type,\n"
    "               allowed values and default (--markdown: as the README's table)\n"
    "\n"
    "Options:\n"
    "  -h, --help     this help; `lopside COMMAND --help` for a command\n"
    "  -V, --version  print the version\n"
    "\n"
    "Exit status: 0 done, 2 bad usage or input (nothing written), 1 failure while\n"
    "running or writing, 130 a simulation stopped by Ctrl-C (nothing written).\n"
    "Errors read `lopside: FILE:LINE: [section] key: message`.\n";

static const char usage_run[] =
    "Usage: lopside run FILE [--json PATH] [--workbook PATH] [--csv DIR] [--quiet]\n"
    "\n"
    "Solves the problem in FILE: the case at hand (posterior given every `observed`\n"
    "value, expected loss or payoff of each action or estimate, the Bayes action, the\n"
    "value of perfect information) and the rule (the Bayes action for every possible\n"
    "measurement, switch points, Bayes risk against deciding on the prior alone), then\n"
    "whatever the file asks for: other rules compared ([rule.NAME]), the value of more\n"
    "measurements ([value]), sweeps ([sweep.NAME]), designs that meet a goal\n"
    "([design.NAME]) and simulated sessions ([simulate]). Long sweeps and simulations\n"
    "show progress on stderr at a terminal; Ctrl-C stops a simulation, writing nothing.\n"
    "\n"
    "  --json PATH      write the results as JSON (overrides [output] json)\n"
    "  --workbook PATH  write an XLSX workbook (overrides [output] workbook): Summary,\n"
    "                   Case with live formulas, Rule, and as the file asks Rules,\n"
    "                   Value, one sheet per sweep, Designs and Simulation, with\n"
    "                   charts; then Inputs (the file as given)\n"
    "  --csv DIR        write one CSV file per table into folder DIR, created when\n"
    "                   missing, with index.csv listing them (overrides [output] csv):\n"
    "                   the case and the rule, rules.csv, value_*.csv, sweep_NAME*.csv,\n"
    "                   designs.csv and simulation*.csv\n"
    "  -q, --quiet      no report on stdout\n"
    "  -h, --help       this help\n"
    "\n"
    "[output] paths are relative to FILE. Output files are written whole or not at\n"
    "all; bad input writes nothing.\n"
    "`lopside keys` lists the format; README.md explains it with examples.\n";

static const char usage_check[] =
    "Usage: lopside check FILE\n"
    "\n"
    "Validates FILE against the problem format and prints the problem as lopside\n"
    "understood it: states and prior, each channel's likelihoods, the loss or payoff\n"
    "table. Exit 0 when valid, 2 with `FILE:LINE: [section] key: message` when not.\n";

static const char usage_demo[] =
    "Usage: lopside demo [--json PATH] [--workbook PATH] [--csv DIR] [--quiet] [--print]\n"
    "\n"
    "Solves the built-in example (a yes/no tone-detection task with a payoff matrix),\n"
    "kept inside the binary so it runs from any folder, and writes its workbook to\n"
    "./lopside-demo.xlsx in the current folder (--workbook PATH writes it elsewhere).\n"
    "`lopside demo --print` shows the example's problem file, a starting point for\n"
    "your own.\n";

static int print_error(const lop_error *err)
{
    char line[1024];
    lop_error_format(err, line, sizeof line);
    fprintf(stderr, "lopside: %s\n", line);
    return err->status == LOP_EINPUT ? EXIT_USAGE : EXIT_RUNTIME;
}

static int usage_error(const char *usage, const char *fmt, const char *arg)
{
    fputs("lopside: ", stderr);
    fprintf(stderr, fmt, arg);
    fputs("\n\n", stderr);
    fputs(usage, stderr);
    return EXIT_USAGE;
}

/* Ctrl-C during a simulation: 128 + SIGINT, the shell's convention. */
#define EXIT_INTERRUPTED 130

/* Set by the SIGINT handler while a simulation runs; the simulation polls it. */
static volatile sig_atomic_t stop_simulation;

static void on_interrupt(int sig)
{
    (void)sig;
    stop_simulation = 1;
}

/* Returns EXIT_DONE after the [simulate] sessions, EXIT_INTERRUPTED when Ctrl-C stopped
 * them (nothing may be written then), or -1 with err set. The SIGINT handler
 * is installed only around the simulation; a second Ctrl-C ends the program at once. */
static int simulate(const lop_problem *p, lop_results *results, const lop_progress *progress,
                    lop_error *err)
{
    struct sigaction action, previous;
    memset(&action, 0, sizeof action);
    action.sa_handler = on_interrupt;
    action.sa_flags = SA_RESETHAND;
    sigemptyset(&action.sa_mask);
    stop_simulation = 0;
    bool handled = sigaction(SIGINT, &action, &previous) == 0;
    lop_simulate_control ctl = {&stop_simulation, progress};
    lop_status st = lop_simulate_run(p, results, &ctl, err);
    if (handled)
        sigaction(SIGINT, &previous, NULL);
    lop_progress_step(progress, "", 1, 1); /* clears a progress line left by a stop */
    if (st != LOP_OK)
        return -1;
    if (results->simulation.interrupted || stop_simulation) {
        fputs("lopside: interrupted during the simulation; nothing was written\n", stderr);
        return EXIT_INTERRUPTED;
    }
    return EXIT_DONE;
}

/* The whole pipeline for one problem file read into cfg. */
static int solve_and_report(lop_config *cfg, const run_options *opt)
{
    lop_error err = {0};
    int status = EXIT_DONE;
    lop_results *results = NULL;
    lop_outfile_list pending = {0};
    lop_problem *given = lop_problem_build(cfg, &err), *p = given;
    lop_solution solution = {0};
    if (!p)
        goto fail;
    const char *json = opt->json ? opt->json : p->out_json;
    const char *workbook = opt->workbook ? opt->workbook : p->out_workbook;
    const char *csv = opt->csv ? opt->csv : p->out_csv;
    if (!workbook)
        workbook = opt->default_workbook;
    lop_progress_line line = {0};
    lop_progress progress = lop_progress_stderr(&line);
    if (lop_accuracy_solve(given, &progress, &solution, &err) != LOP_OK)
        goto fail;
    results = solution.results;
    /* The answer belongs to the grids it was solved on: the refined problem, if any. */
    if (solution.refined)
        p = solution.refined;
    if (p->simulate.present) {
        int sim = simulate(p, results, &progress, &err);
        if (sim == EXIT_INTERRUPTED) {
            status = sim;
            goto done;
        }
        if (sim != EXIT_DONE)
            goto fail;
    }
    lop_provenance prov;
    lop_provenance_fill(&prov, cfg->path, cfg->text, cfg->text_len);
    prov.has_seed = p->simulate.present;
    prov.seed = p->simulate.seed;
    /* Every output is finished before any replaces its target: all or none. */
    if ((json && lop_report_json(json, p, results, &prov, &pending, &err) != LOP_OK) ||
        (workbook && lop_report_xlsx(workbook, p, results, &prov, &pending, &err) != LOP_OK) ||
        (csv && lop_report_csv(csv, p, results, &prov, &pending, &err) != LOP_OK) ||
        lop_outfile_commit_all(&pending, &err) != LOP_OK)
        goto fail;
    if (!opt->quiet)
        lop_report_text(stdout, p, results, &prov);
    if (!opt->quiet && (json || workbook || csv))
        fputc('\n', stdout);
    if (json && !opt->quiet)
        fprintf(stdout, "JSON written to %s\n", json);
    if (workbook && !opt->quiet)
        fprintf(stdout, "Workbook written to %s\n", workbook);
    if (csv && !opt->quiet)
        fprintf(stdout, "CSV tables written to %s/ (index.csv lists them)\n", csv);
    if (fflush(stdout) != 0) {
        lop_error_run(&err, "cannot write the report to standard output");
        goto fail;
    }
    goto done;
fail:
    status = print_error(&err);
done:
    lop_outfile_abandon_all(&pending);
    lop_results_free(results);
    lop_problem_free(solution.refined);
    lop_problem_free(given);
    return status;
}

static const struct option longopts[] = {
    {"json", required_argument, NULL, 'j'},
    {"workbook", required_argument, NULL, 'w'},
    {"csv", required_argument, NULL, 'c'},
    {"quiet", no_argument, NULL, 'q'},
    {"print", no_argument, NULL, 'p'},
    {"help", no_argument, NULL, 'h'},
    {NULL, 0, NULL, 0},
};

/* Returns EXIT_USAGE after saying what was wrong with the option getopt_long refused at
 * argv[optind - 1]: a known option lacking or given a value, or an unknown one with the
 * nearest option this command takes (`--print` is demo's alone). */
static int option_error(const char *usage, char **argv, bool demo)
{
    char text[256];
    const char *arg = argv[optind - 1];
    const struct option *known = NULL;
    for (const struct option *o = longopts; o->name && optopt; o++)
        if (o->val == optopt && (demo || o->val != 'p'))
            known = o;
    if (known && strncmp(arg, "--", 2) == 0) {
        snprintf(text, sizeof text, "option --%s %s", known->name,
                 known->has_arg == required_argument ? "needs a value" : "takes no value");
    } else if (strncmp(arg, "--", 2) == 0) {
        char name[64], *names[sizeof longopts / sizeof *longopts];
        size_t n = 0;
        snprintf(name, sizeof name, "%.*s", (int)strcspn(arg + 2, "="), arg + 2);
        for (const struct option *o = longopts; o->name; o++)
            if (demo || o->val != 'p')
                names[n++] = (char *)o->name;
        const char *near = lop_nearest(name, names, n);
        snprintf(text, sizeof text, "unknown option --%s%s%s%s", name,
                 near ? "; did you mean --" : "", near ? near : "", near ? "?" : "");
    } else {
        snprintf(text, sizeof text, "unknown option -%c", optopt ? optopt : '?');
    }
    return usage_error(usage, "%s", text);
}

static int parse_run_options(int argc, char **argv, const char *usage, run_options *opt,
                             int *print_demo)
{
    optind = 1;
    opterr = 0;
    int ch;
    while ((ch = getopt_long(argc, argv, "qh", longopts, NULL)) != -1) {
        switch (ch) {
        case 'j': opt->json = optarg; break;
        case 'w': opt->workbook = optarg; break;
        case 'c': opt->csv = optarg; break;
        case 'q': opt->quiet = 1; break;
        case 'p':
            if (!print_demo)
                return usage_error(usage, "%s", "option --print belongs to `lopside demo`");
            *print_demo = 1;
            break;
        case 'h': fputs(usage, stdout); return -1;
        default:
            return option_error(usage, argv, print_demo != NULL);
        }
    }
    return EXIT_DONE;
}

static int cmd_run(int argc, char **argv)
{
    run_options opt = {0};
    int st = parse_run_options(argc, argv, usage_run, &opt, NULL);
    if (st != EXIT_DONE)
        return st < 0 ? EXIT_DONE : st;
    if (optind + 1 != argc)
        return usage_error(usage_run, "%s", optind == argc ? "run needs a problem FILE"
                                                             : "run takes one FILE");
    lop_error err = {0};
    lop_config *cfg = lop_config_read_file(argv[optind], &err);
    if (!cfg)
        return print_error(&err);
    int status = solve_and_report(cfg, &opt);
    lop_config_free(cfg);
    return status;
}

static int cmd_check(int argc, char **argv)
{
    if (argc == 2 && (strcmp(argv[1], "--help") == 0 || strcmp(argv[1], "-h") == 0)) {
        fputs(usage_check, stdout);
        return EXIT_DONE;
    }
    if (argc != 2 || argv[1][0] == '-')
        return usage_error(usage_check, "%s", "check takes exactly one FILE");
    lop_error err = {0};
    lop_config *cfg = lop_config_read_file(argv[1], &err);
    lop_problem *p = cfg ? lop_problem_build(cfg, &err) : NULL;
    int status = EXIT_DONE;
    if (p) {
        lop_report_problem(stdout, p);
        printf("\n%s: valid\n", argv[1]);
    } else {
        status = print_error(&err);
    }
    lop_problem_free(p);
    lop_config_free(cfg);
    return status;
}

static char *demo_text(size_t *len)
{
    size_t n = 0;
    for (size_t i = 0; lop_demo_lines[i]; i++)
        n += strlen(lop_demo_lines[i]);
    char *text = malloc(n + 1);
    if (!text)
        return NULL;
    text[0] = '\0';
    for (size_t i = 0, at = 0; lop_demo_lines[i]; i++) {
        size_t k = strlen(lop_demo_lines[i]);
        memcpy(text + at, lop_demo_lines[i], k + 1);
        at += k;
    }
    *len = n;
    return text;
}

static int cmd_demo(int argc, char **argv)
{
    run_options opt = {.default_workbook = "./lopside-demo.xlsx"};
    int print_demo = 0;
    int st = parse_run_options(argc, argv, usage_demo, &opt, &print_demo);
    if (st != EXIT_DONE)
        return st < 0 ? EXIT_DONE : st;
    if (optind != argc)
        return usage_error(usage_demo, "demo takes no FILE (got %s)", argv[optind]);
    size_t len;
    char *text = demo_text(&len);
    if (!text) {
        fputs("lopside: out of memory\n", stderr);
        return EXIT_RUNTIME;
    }
    if (print_demo) {
        fputs(text, stdout);
        free(text);
        return EXIT_DONE;
    }
    lop_error err = {0};
    lop_config *cfg = lop_config_read_text(lop_demo_name, text, len, &err);
    free(text);
    if (!cfg)
        return print_error(&err);
    int status = solve_and_report(cfg, &opt);
    lop_config_free(cfg);
    return status;
}

int main(int argc, char **argv)
{
    gsl_set_error_handler_off();
    if (argc < 2)
        return usage_error(usage_main, "%s", "no command given");
    const char *cmd = argv[1];
    if (strcmp(cmd, "--help") == 0 || strcmp(cmd, "-h") == 0 || strcmp(cmd, "help") == 0) {
        fputs(usage_main, stdout);
        return EXIT_DONE;
    }
    if (strcmp(cmd, "--version") == 0 || strcmp(cmd, "-V") == 0) {
        printf("lopside %s\n", LOP_VERSION);
        return EXIT_DONE;
    }
    if (strcmp(cmd, "run") == 0)
        return cmd_run(argc - 1, argv + 1);
    if (strcmp(cmd, "check") == 0)
        return cmd_check(argc - 1, argv + 1);
    if (strcmp(cmd, "demo") == 0)
        return cmd_demo(argc - 1, argv + 1);
    if (strcmp(cmd, "keys") == 0) {
        bool markdown = argc == 3 && strcmp(argv[2], "--markdown") == 0;
        if (argc > 3 || (argc == 3 && !markdown))
            return usage_error(usage_main, "`keys` takes only --markdown, not `%s`", argv[2]);
        lop_keys_print_reference(stdout, markdown);
        return EXIT_DONE;
    }
    char *commands[] = {"run", "check", "demo", "keys", "help"};
    const char *near = lop_nearest(cmd, commands, sizeof commands / sizeof *commands);
    char text[256];
    snprintf(text, sizeof text, "unknown command `%.64s`%s%s%s", cmd,
             near ? "; did you mean `" : "", near ? near : "", near ? "`?" : "");
    return usage_error(usage_main, "%s", text);
}
