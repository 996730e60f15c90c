/* lopside: the command line. Parses arguments, runs the pipeline
 * config -> problem -> engine -> results -> writers, and alone prints errors. */
#include <getopt.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <gsl/gsl_errno.h>

#include "lopside/config.h"
#include "lopside/demo.h"
#include "lopside/engine.h"
#include "lopside/keys.h"
#include "lopside/problem.h"
#include "lopside/provenance.h"
#include "lopside/report.h"

enum { EXIT_DONE = 0, EXIT_RUNTIME = 1, EXIT_USAGE = 2 };

typedef struct {
    const char *json, *workbook, *csv;
    int quiet;
} run_options;

static const char usage_main[] =
    "Usage: lopside COMMAND [OPTIONS]\n"
    "\n"
    "Decision analysis for choices whose costs are lopsided: reads a problem file\n"
    "(states, prior, evidence, actions, loss or payoff) and reports the Bayes action,\n"
    "its expected loss, the decision rule over every measurement and its risk.\n"
    "\n"
    "Commands:\n"
    "  run FILE     solve the problem in FILE and print the report\n"
    "  check FILE   validate FILE and print the problem as understood (exit 0 or 2)\n"
    "  demo         solve the built-in tone-detection example\n"
    "  keys         print every section and key of the problem format\n"
    "\n"
    "Options:\n"
    "  -h, --help     this help; `lopside COMMAND --help` for a command\n"
    "  -V, --version  print the version\n"
    "\n"
    "Exit status: 0 done, 2 bad usage or input (nothing written), 1 failure while\n"
    "running or writing. Errors read `lopside: FILE:LINE: [section] key: message`.\n";

static const char usage_run[] =
    "Usage: lopside run FILE [--json PATH] [--workbook PATH] [--csv DIR] [--quiet]\n"
    "\n"
    "Solves the problem in FILE: the case at hand (posterior given every `observed`\n"
    "value, expected loss or payoff of each action, the Bayes action, the value of\n"
    "perfect information) and the rule (the Bayes action for every possible\n"
    "measurement, switch points, Bayes risk against deciding on the prior alone).\n"
    "\n"
    "  --json PATH      write the results as JSON (overrides [output] json)\n"
    "  --workbook PATH  write an XLSX workbook (not built yet in this version)\n"
    "  --csv DIR        write CSV tables (not built yet in this version)\n"
    "  -q, --quiet      no report on stdout\n"
    "  -h, --help       this help\n"
    "\n"
    "Output files are written whole or not at all; bad input writes nothing.\n"
    "`lopside keys` lists the format; README.md explains it with examples.\n";

static const char usage_check[] =
    "Usage: lopside check FILE\n"
    "\n"
    "Validates FILE against the problem format and prints the problem as lopside\n"
    "understood it: states and prior, each channel's likelihoods, the loss or payoff\n"
    "table. Exit 0 when valid, 2 with `FILE:LINE: [section] key: message` when not.\n";

static const char usage_demo[] =
    "Usage: lopside demo [--json PATH] [--quiet]\n"
    "\n"
    "Solves the built-in example (a yes/no tone-detection task with a payoff matrix),\n"
    "kept inside the binary so it runs from any folder. `lopside demo --print` shows\n"
    "the example's problem file, a starting point for your own.\n";

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

/* The whole pipeline for one problem file read into cfg. */
static int solve_and_report(lop_config *cfg, const run_options *opt)
{
    lop_error err = {0};
    int status = EXIT_DONE;
    lop_results *results = NULL;
    lop_problem *p = lop_problem_build(cfg, &err);
    if (!p)
        goto fail;
    const char *json = opt->json ? opt->json : p->out_json;
    if (opt->workbook || opt->csv) {
        lop_error_input(&err, NULL, 0, NULL, NULL,
                        "%s: the %s writer is not built yet in this version",
                        opt->workbook ? "--workbook" : "--csv",
                        opt->workbook ? "workbook" : "CSV");
        goto fail;
    }
    results = lop_engine_solve(p, &err);
    if (!results)
        goto fail;
    if (p->out_workbook)
        lop_results_warn(results, "[output] workbook: not written; the workbook writer is "
                                  "not built yet in this version");
    if (p->out_csv)
        lop_results_warn(results, "[output] csv: not written; the CSV writer is not built "
                                  "yet in this version");
    lop_provenance prov;
    lop_provenance_fill(&prov, cfg->path, cfg->text, cfg->text_len);
    if (json && lop_report_json(json, p, results, &prov, &err) != LOP_OK)
        goto fail;
    if (!opt->quiet)
        lop_report_text(stdout, p, results);
    if (json && !opt->quiet)
        fprintf(stdout, "\nJSON written to %s\n", json);
    if (fflush(stdout) != 0) {
        lop_error_run(&err, "cannot write the report to standard output");
        goto fail;
    }
    goto done;
fail:
    status = print_error(&err);
done:
    lop_results_free(results);
    lop_problem_free(p);
    return status;
}

static int parse_run_options(int argc, char **argv, const char *usage, run_options *opt,
                             int *print_demo)
{
    static const struct option longopts[] = {
        {"json", required_argument, NULL, 'j'},
        {"workbook", required_argument, NULL, 'w'},
        {"csv", required_argument, NULL, 'c'},
        {"quiet", no_argument, NULL, 'q'},
        {"print", no_argument, NULL, 'p'},
        {"help", no_argument, NULL, 'h'},
        {NULL, 0, NULL, 0},
    };
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
                return usage_error(usage, "unknown option %s", "--print");
            *print_demo = 1;
            break;
        case 'h': fputs(usage, stdout); return -1;
        default:
            return usage_error(usage, "unknown or incomplete option %s", argv[optind - 1]);
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
    run_options opt = {0};
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
        lop_keys_print_reference(stdout);
        return EXIT_DONE;
    }
    return usage_error(usage_main, "unknown command `%s`", cmd);
}
