/* help.c - the help texts of `twingyre`: one entry per command (synopsis,
 * what it does, every option with its default, exit codes, an example).
 * The same strings give the global help (one line per command), each
 * command's `--help` and the man page (`twingyre help-man`, troff), so the
 * three cannot disagree. */
#include <stdio.h>
#include <string.h>

#include "cli.h"

#ifndef PACKAGE_VERSION
#define PACKAGE_VERSION "unknown"
#endif

typedef struct {
    const char *name; /* "--set SECTION.KEY=VALUE" */
    const char *def;  /* the default, or NULL when the option is a switch or required */
    const char *text;
} help_opt;

typedef struct {
    const char *name;
    const char *summary;  /* one line, for the global help */
    const char *synopsis; /* after "twingyre " */
    const char *about;    /* a paragraph */
    const help_opt *opts;
    const char *exits;    /* the exit statuses the command can return, e.g. "0123" */
    const char *example;
} help_cmd;

/* The options shared by the commands that read a config. */
#define OPT_SET {"--set SECTION.KEY=VALUE", NULL, "override one config key, with the same checks as the file (repeatable)"}
#define OPT_OUT {"--out DIR", "[output] directory", "output folder"}
#define OPT_OVERWRITE {"--overwrite", NULL, "replace the output files already in the folder"}
#define OPT_THREADS {"--threads N", "OMP_NUM_THREADS", "OpenMP threads"}
#define OPT_MEMBER {"--member K", "0", "ensemble member of stochastic closures"}
#define OPT_QUIET {"--quiet", NULL, "no progress and no summary lines (warnings and errors stay)"}
#define OPT_HELP {"--help", NULL, "this text"}

static const help_opt run_opts[] = {OPT_SET, OPT_OUT, OPT_OVERWRITE, OPT_THREADS, OPT_MEMBER,
                                    OPT_QUIET, OPT_HELP, {NULL, NULL, NULL}};
static const help_opt describe_opts[] = {OPT_SET, OPT_OUT, OPT_MEMBER, OPT_HELP,
                                         {NULL, NULL, NULL}};
static const help_opt closures_opts[] = {OPT_HELP, {NULL, NULL, NULL}};
static const help_opt twin_opts[] = {OPT_SET, OPT_OUT, OPT_OVERWRITE, OPT_THREADS, OPT_QUIET,
                                     OPT_HELP, {NULL, NULL, NULL}};
static const help_opt vet_opts[] = {OPT_SET, OPT_OUT, OPT_OVERWRITE, OPT_THREADS, OPT_MEMBER,
                                    OPT_QUIET, OPT_HELP, {NULL, NULL, NULL}};
static const help_opt fit_opts[] = {
    {"--out FILE", NULL, "the coefficients file to write (required; a file, not a folder: "
                         "a config names it as [coefficients] file)"},
    {"--terms a,b,...|all", "all", "basis terms to fit (`twingyre closures coefficients` lists them)"},
    {"--layers separate|shared", "separate", "one set of coefficients per layer, or one for all layers"},
    {"--method ols|ridge|sequential-threshold|rvm", "ols",
     "least squares, ridge, sequentially thresholded least squares (Brunton, Proctor & Kutz "
     "2016), relevance vector machine (Tipping 2001)"},
    {"--ridge L", "1e-6; sequential-threshold 0", "ridge parameter on standardized columns"},
    {"--drop-below C", "0.05", "sequential-threshold: drop terms whose standardized coefficient "
                               "is below C in magnitude"},
    {"--prune-alpha A", "1e8", "rvm: prune terms whose precision exceeds A"},
    {"--train FIRST:LAST", "all samples", "training samples (indices from 0)"},
    {"--test FIRST:LAST", "none", "test samples"},
    {"--target forcing|flux", "forcing", "-S_q, or minus the divergence of the sub-grid flux"},
    {"--chunk-samples N", "4", "samples held in memory at once"},
    {"--dump-design FILE.nc", "none", "also write the training design matrix and target"},
    OPT_OVERWRITE,
    OPT_THREADS,
    OPT_QUIET,
    OPT_HELP,
    {NULL, NULL, NULL}};
static const help_opt sweep_opts[] = {
    {"--list", NULL, "print each member's index, name and resolved values, and run nothing"},
    {"--jobs N", "1", "members run at the same time on this machine"},
    {"--threads T", "1", "OpenMP threads of each member (not OMP_NUM_THREADS: --jobs members run "
                         "side by side, and jobs x threads should not exceed the cores)"},
    {"--out DIR", "[sweep] directory", "output folder"},
    {"--member K", NULL, "run member K only (what a cluster task calls)"},
    {"--collect", NULL, "write DIR/sweep.csv and DIR/sweep.json again"},
    {"--slurm-script FILE", NULL, "write FILE (job array), FILE.collect and FILE.submit"},
    {"--mpi", NULL, "hand members to MPI ranks (automatic under mpirun; needs a build with "
                    "./configure --with-mpi)"},
    {"--quiet", NULL, "no progress line"},
    OPT_HELP,
    {NULL, NULL, NULL}};

static const help_cmd commands[] = {
    {"run", "run one experiment (fields.nc, budget.nc, checkpoint.nc)",
     "run CONFIG [options]",
     "Runs the experiment of CONFIG and writes DIR/fields.nc, DIR/budget.nc and "
     "DIR/checkpoint.nc. SIGINT or SIGTERM writes the checkpoint and stops; "
     "[initial] state = DIR/checkpoint.nc resumes.",
     run_opts, "012345678", "twingyre run configs/demo.ini --out demo-run --threads 2"},
    {"describe", "print the resolved config, derived scales and warnings; run nothing",
     "describe CONFIG [options]",
     "Prints the fully resolved config and the derived scales (grid spacing, deformation "
     "radii, boundary layers, CFL, steps, memory; for a twin config its phases and the "
     "coarse grid's scales), and warns about risky settings it can see. Writes nothing.",
     describe_opts, "0127", "twingyre describe configs/demo.ini --set grid.points=129"},
    {"closures", "list the closure schemes, their parameters and sources",
     "closures [NAME]",
     "Lists every closure scheme with its parameters (unit, default, range) and published "
     "source; NAME shows one. `twingyre closures coefficients` also lists the basis terms "
     "that `fit` and coefficients files use.",
     closures_opts, "01", "twingyre closures smagorinsky"},
    {"twin", "twin experiment: fine reference, coarse runs, sub-grid forcing, skill",
     "twin CONFIG [options]",
     "Runs a fine reference, coarse-grains it (DIR/subgrid.nc), runs the coarse twin with "
     "each closure of [twin] compare and scores them (DIR/skill.csv, DIR/skill.json, "
     "DIR/offline.nc); the skill table goes to stdout. scripts/twin-report DIR draws the "
     "report.",
     twin_opts, "012345678", "twingyre twin configs/demo.ini --out demo-twin"},
    {"fit", "fit closure coefficients to a twin's sub-grid forcing",
     "fit SUBGRID.nc --out FILE [options]",
     "Fits the coefficients of the basis terms to the sub-grid forcing of a twin's "
     "subgrid.nc and writes a coefficients file for [closure] use = coefficients. "
     "Unlike the other commands, --out names a file: the one output is read back by name "
     "from a config.",
     fit_opts, "0123478", "twingyre fit demo-twin/subgrid.nc --out demo.coef --method rvm"},
    {"vet", "battery of checks on the configured closure; exit 9 when one fails",
     "vet CONFIG [options]",
     "Checks the configured closure: linear response, conservation, online runs over step "
     "factors and coefficient multipliers, a finer grid. Prints the run table and the "
     "verdict table on stdout and writes DIR/vet.json.",
     vet_opts, "0123456789", "twingyre vet configs/demo.ini --set closure.use=smagorinsky"},
    {"sweep", "run the members of a sweep file and merge their summaries",
     "sweep SWEEP [options]",
     "Runs each member of a sweep file (a base config, [common] keys for every member, "
     "[vary] keys) as its own process, on this machine, under MPI or as a Slurm job array, "
     "and merges their summaries into DIR/sweep.csv and DIR/sweep.json.",
     sweep_opts, "01236789", "twingyre sweep configs/sweep-demo.ini --jobs 2"},
};
#define NCOMMANDS ((int)(sizeof commands / sizeof commands[0]))

static const char *const exit_meaning[10] = {
    "done",
    "usage error (unknown command or option, missing argument)",
    "config error (unknown key, wrong type, out of range, inconsistent keys)",
    "input/output error (a file cannot be read or written; output exists without --overwrite)",
    "numerical library error (FFTW plan, LAPACK)",
    "the run became unstable (NaN/Inf or CFL above max_cfl)",
    "stopped by SIGINT/SIGTERM; checkpoint written",
    "out of memory",
    "internal error (a bug: please report it)",
    "a vet check failed, or some sweep members failed",
};

static const help_cmd *find(const char *name)
{
    for (int i = 0; i < NCOMMANDS; i++)
        if (!strcmp(commands[i].name, name))
            return &commands[i];
    return NULL;
}

int cli_help_known(const char *command)
{
    return find(command) != NULL;
}

/* Prints text wrapped at 78 columns, its lines starting at column
 * `indent`; `col` columns of the first line are written already (less than
 * indent). */
static void wrap(FILE *f, const char *text, int indent, int col)
{
    int words = 0; /* on the current line */
    for (const char *p = text; *p;) {
        size_t w = strcspn(p, " ");
        if (w > 0) {
            if (words > 0 && col + 1 + (int)w > 78) {
                fputc('\n', f);
                col = 0;
                words = 0;
            }
            if (words > 0) {
                fputc(' ', f);
                col++;
            } else {
                fprintf(f, "%*s", indent - col, "");
                col = indent;
            }
            fprintf(f, "%.*s", (int)w, p);
            col += (int)w;
            words++;
            p += w;
        }
        while (*p == ' ')
            p++;
    }
    fputc('\n', f);
}

void cli_help_global(FILE *f)
{
    fprintf(f, "twingyre %s - layered quasi-geostrophic wind-driven gyre simulator\n\n"
               "usage: twingyre COMMAND [options]\n\ncommands:\n",
            PACKAGE_VERSION);
    for (int i = 0; i < NCOMMANDS; i++)
        fprintf(f, "  %-9s %s\n", commands[i].name, commands[i].summary);
    fprintf(f, "\n"
               "twingyre COMMAND --help (or twingyre help COMMAND) shows a command's options,\n"
               "defaults, exit statuses and an example; twingyre help-man prints the man page.\n"
               "  --help     this text\n"
               "  --version  program version\n\n"
               "Folders and threads: --out is the output folder of run, describe, twin, vet and\n"
               "sweep; fit's --out is the one file it writes. --threads defaults to\n"
               "OMP_NUM_THREADS, except in sweep (1 per member; --jobs members run at once).\n\n"
               "Exit status: 0 done, 1 usage, 2 config, 3 input/output, 4 numerical library,\n"
               "5 unstable run, 6 stopped by a signal, 7 out of memory, 8 internal error,\n"
               "9 a vet check or some sweep members failed. The README has the config\n"
               "reference and the sweep file reference.\n");
}

int cli_help_command(const char *command, FILE *f)
{
    const help_cmd *c = find(command);
    if (!c)
        return -1;
    fprintf(f, "usage: twingyre %s\n\n", c->synopsis);
    wrap(f, c->about, 0, 0);
    fprintf(f, "\noptions (default in brackets):\n");
    for (const help_opt *o = c->opts; o->name; o++) {
        char text[512];
        if (o->def)
            snprintf(text, sizeof text, "%s [%s]", o->text, o->def);
        else
            snprintf(text, sizeof text, "%s", o->text);
        int col = fprintf(f, "  %s", o->name);
        if (col > 30) {
            fputc('\n', f);
            col = 0;
        }
        wrap(f, text, 32, col);
    }
    fprintf(f, "\nexit status:\n");
    for (const char *e = c->exits; *e; e++)
        wrap(f, exit_meaning[*e - '0'], 5, fprintf(f, "  %c", *e));
    fprintf(f, "\nexample:\n  %s\n", c->example);
    return 0;
}

/* troff: a backslash and a leading dot or quote need escaping; '-' in an
 * option is a minus sign. */
static void roff(FILE *f, const char *s)
{
    if (*s == '.' || *s == '\'')
        fputs("\\&", f);
    for (; *s; s++) {
        if (*s == '\\')
            fputs("\\e", f);
        else if (*s == '-')
            fputs("\\-", f);
        else
            fputc(*s, f);
    }
}

void cli_help_man(FILE *f)
{
    fprintf(f, ".\\\" twingyre.1 - generated by `twingyre help-man` from src/cli/help.c; do not "
               "edit.\n"
               ".TH TWINGYRE 1 \"\" \"twingyre %s\" \"User Commands\"\n"
               ".SH NAME\ntwingyre \\- layered quasi\\-geostrophic wind\\-driven gyre simulator\n"
               ".SH SYNOPSIS\n",
            PACKAGE_VERSION);
    for (int i = 0; i < NCOMMANDS; i++) {
        fputs(".B twingyre\n", f);
        roff(f, commands[i].synopsis);
        fputs("\n.br\n", f);
    }
    fputs(".SH DESCRIPTION\ntwingyre simulates the idealized wind\\-driven double\\-gyre ocean "
          "in layered quasi\\-geostrophic dynamics, as a test bench for sub\\-grid eddy "
          "closures. The README of the source distribution holds the config reference.\n"
          ".SH COMMANDS\n",
          f);
    for (int i = 0; i < NCOMMANDS; i++) {
        const help_cmd *c = &commands[i];
        fputs(".SS twingyre ", f);
        roff(f, c->synopsis);
        fputs("\n", f);
        roff(f, c->about);
        fputs("\n", f);
        for (const help_opt *o = c->opts; o->name; o++) {
            fputs(".TP\n.B ", f);
            roff(f, o->name);
            fputs("\n", f);
            roff(f, o->text);
            if (o->def) {
                fputs(" [", f);
                roff(f, o->def);
                fputs("]", f);
            }
            fputs("\n", f);
        }
        fputs(".PP\nExample:\n.RS\n.B ", f);
        roff(f, c->example);
        fputs("\n.RE\n", f);
    }
    fputs(".SH EXIT STATUS\n", f);
    for (int e = 0; e < 10; e++) {
        fprintf(f, ".TP\n.B %d\n", e);
        roff(f, exit_meaning[e]);
        fputs("\n", f);
    }
    fputs(".SH ENVIRONMENT\n.TP\n.B OMP_NUM_THREADS\nthe default of \\-\\-threads (except in "
          "sweep)\n.TP\n.B TWINGYRE_LOG=debug\nadds set\\-up details to the log\n"
          ".SH LICENSE\nGPL\\-3.0\\-or\\-later\n",
          f);
}
