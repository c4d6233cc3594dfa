/* sweep_collect.c - the merged table of a sweep (sweep.h): one row per
 * member in DIRECTORY/sweep.csv and DIRECTORY/sweep.json.
 *
 * Figures of a member whose status is done, from its budget.nc (a twin's:
 * reference/budget.nc), README "Sweeps and ensembles":
 *   days                      model time of the last record
 *   energy_final, energy_mean energy at the last record, mean over records
 *   enstrophy_final, enstrophy_mean
 *                             the same for the enstrophy summed over layers
 *   energy_residual_relative  max over records of |energy_residual| divided
 *                             by the max over records and terms of |energy_T|
 *                             (every energy_* rate except energy_tendency and
 *                             energy_residual)
 * and, for twins, every metric of skill.csv as skill_RUN_layerL_METRIC plus
 * skill_RUN_status (RUN with blanks as '_'), columns in order of first
 * appearance over the members. sweep.csv holds nothing that depends on the
 * machine or the clock, so the local pool, MPI and Slurm give the same
 * bytes; host, threads and times are in sweep.json only. A done member whose
 * files cannot be read gets empty figures and a warning in the log.
 */
#include "ncio_util.h"
#include "ncverify.h"
#include "strbuf.h"
#include "sweep.h"
#include "textfile.h"

#include <netcdf.h>

#include <errno.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#define NFIG 6
static const char *const fig_names[NFIG] = {"days", "energy_final", "energy_mean",
                                            "enstrophy_final", "enstrophy_mean",
                                            "energy_residual_relative"};

/* Extra (skill) columns: names, and per member its values as text. */
typedef struct {
    int ncols;
    char **col;       /* owned */
    char ***val;      /* val[member][col], owned; NULL = empty */
    int nmembers;
} extra_table;

static int extra_col(extra_table *t, const char *name)
{
    for (int i = 0; i < t->ncols; i++)
        if (!strcmp(t->col[i], name))
            return i;
    char **nc = realloc(t->col, (size_t)(t->ncols + 1) * sizeof *nc);
    if (!nc)
        return -1;
    t->col = nc;
    if (!(t->col[t->ncols] = strdup(name)))
        return -1;
    for (int m = 0; m < t->nmembers; m++) {
        char **nv = realloc(t->val[m], (size_t)(t->ncols + 1) * sizeof *nv);
        if (!nv)
            return -1;
        nv[t->ncols] = NULL;
        t->val[m] = nv;
    }
    return t->ncols++;
}

static void extra_free(extra_table *t)
{
    for (int m = 0; m < t->nmembers && t->val; m++) {
        for (int i = 0; i < t->ncols && t->val[m]; i++)
            free(t->val[m][i]);
        free(t->val[m]);
    }
    for (int i = 0; i < t->ncols; i++)
        free(t->col[i]);
    free(t->col);
    free(t->val);
}

static tg_code budget_figures(const char *path, double fig[NFIG], tg_status *st)
{
    int ncid, v, d, nvars = 0;
    size_t nt = 0, nl = 1;
    tg_code rc;
    for (int i = 0; i < NFIG; i++)
        fig[i] = NAN;
    if ((rc = tg_nc_open_verified(path, &ncid, st)) != TG_OK)
        return rc;
    double *e = NULL, *z = NULL, *buf = NULL;
    rc = tg_nc_check(nc_inq_dimid(ncid, "time", &d), path, "finding dimension time", NULL, st);
    if (rc == TG_OK)
        rc = tg_nc_check(nc_inq_dimlen(ncid, d, &nt), path, "reading dimension time", NULL, st);
    if (rc == TG_OK && nc_inq_dimid(ncid, "layer", &d) == NC_NOERR)
        rc = tg_nc_check(nc_inq_dimlen(ncid, d, &nl), path, "reading dimension layer", NULL, st);
    if (rc == TG_OK && nt == 0)
        rc = tg_fail(st, TG_ERR_IO, "%s: no records", path);
    if (rc == TG_OK) {
        e = malloc(nt * sizeof *e);
        z = malloc(nt * nl * sizeof *z);
        buf = malloc(nt * sizeof *buf);
        if (!e || !z || !buf)
            rc = tg_fail(st, TG_ERR_NOMEM, "out of memory reading %s", path);
    }
    if (rc == TG_OK && (rc = tg_nc_check(nc_inq_varid(ncid, "time", &v), path, "finding", "time",
                                         st)) == TG_OK) {
        size_t last = nt - 1;
        rc = tg_nc_check(nc_get_var1_double(ncid, v, &last, &fig[0]), path, "reading", "time", st);
    }
    if (rc == TG_OK && (rc = tg_nc_check(nc_inq_varid(ncid, "energy", &v), path, "finding",
                                         "energy", st)) == TG_OK)
        rc = tg_nc_check(nc_get_var_double(ncid, v, e), path, "reading", "energy", st);
    if (rc == TG_OK && (rc = tg_nc_check(nc_inq_varid(ncid, "enstrophy", &v), path, "finding",
                                         "enstrophy", st)) == TG_OK)
        rc = tg_nc_check(nc_get_var_double(ncid, v, z), path, "reading", "enstrophy", st);
    if (rc == TG_OK) {
        double es = 0.0, zs = 0.0, zlast = 0.0;
        for (size_t t = 0; t < nt; t++) {
            double zt = 0.0;
            for (size_t l = 0; l < nl; l++)
                zt += z[t * nl + l];
            es += e[t];
            zs += zt;
            zlast = zt;
        }
        fig[1] = e[nt - 1];
        fig[2] = es / (double)nt;
        fig[3] = zlast;
        fig[4] = zs / (double)nt;
    }
    if (rc == TG_OK)
        rc = tg_nc_check(nc_inq_nvars(ncid, &nvars), path, "counting variables", NULL, st);
    double res = 0.0, big = 0.0;
    for (int i = 0; i < nvars && rc == TG_OK; i++) {
        char name[NC_MAX_NAME + 1];
        int ndims;
        if ((rc = tg_nc_check(nc_inq_varname(ncid, i, name), path, "reading a variable name",
                              NULL, st)) != TG_OK ||
            (rc = tg_nc_check(nc_inq_varndims(ncid, i, &ndims), path, "reading", name, st)) !=
                TG_OK)
            break;
        if (strncmp(name, "energy_", 7) != 0 || ndims != 1 || !strcmp(name, "energy_tendency"))
            continue;
        if ((rc = tg_nc_check(nc_get_var_double(ncid, i, buf), path, "reading", name, st)) != TG_OK)
            break;
        double mx = 0.0;
        for (size_t t = 0; t < nt; t++)
            mx = fmax(mx, fabs(buf[t]));
        if (!strcmp(name, "energy_residual"))
            res = mx;
        else
            big = fmax(big, mx);
    }
    if (rc == TG_OK)
        fig[5] = big > 0.0 ? res / big : res;
    free(e);
    free(z);
    free(buf);
    int crc = nc_close(ncid);
    if (rc == TG_OK)
        rc = tg_nc_check(crc, path, "closing", NULL, st);
    return rc;
}

/* Splits a line of skill.csv (our own writer: no quoting, no commas in
 * fields) in place. */
static int split_csv(char *line, char **f, int max)
{
    int n = 0;
    line[strcspn(line, "\r\n")] = '\0';
    for (char *p = line; n < max;) {
        f[n++] = p;
        char *c = strchr(p, ',');
        if (!c)
            break;
        *c = '\0';
        p = c + 1;
    }
    return n;
}

static tg_code skill_columns(const char *path, int m, extra_table *t, tg_status *st)
{
    FILE *f = fopen(path, "r");
    if (!f)
        return tg_fail(st, TG_ERR_IO, "cannot read %s: %s", path, strerror(errno));
    char head[4096], line[4096], run[256], name[512];
    char *hf[64], *lf[64];
    tg_code rc = TG_OK;
    if (!fgets(head, sizeof head, f)) {
        fclose(f);
        return tg_fail(st, TG_ERR_IO, "%s: empty file", path);
    }
    int nh = split_csv(head, hf, 64);
    int i_run = -1, i_status = -1, i_layer = -1;
    for (int i = 0; i < nh; i++) {
        if (!strcmp(hf[i], "run"))
            i_run = i;
        else if (!strcmp(hf[i], "status"))
            i_status = i;
        else if (!strcmp(hf[i], "layer"))
            i_layer = i;
    }
    if (i_run < 0 || i_status < 0 || i_layer < 0) {
        fclose(f);
        return tg_fail(st, TG_ERR_IO, "%s: expected the columns run, status and layer", path);
    }
    int lineno = 1;
    while (rc == TG_OK && fgets(line, sizeof line, f)) {
        lineno++;
        int n = split_csv(line, lf, 64);
        if (n != nh) {
            rc = tg_fail(st, TG_ERR_IO, "%s:%d: expected %d fields, found %d", path, lineno, nh, n);
            break;
        }
        size_t j = 0;
        for (const char *p = lf[i_run]; *p && j + 1 < sizeof run; p++)
            run[j++] = *p == ' ' ? '_' : *p;
        run[j] = '\0';
        snprintf(name, sizeof name, "skill_%s_status", run);
        int c = extra_col(t, name);
        if (c >= 0 && !t->val[m][c])
            t->val[m][c] = strdup(lf[i_status]);
        for (int i = 0; i < nh && c >= 0; i++) {
            if (i <= i_layer || i == i_status)
                continue; /* run, directory, closure, member, status, layer */
            snprintf(name, sizeof name, "skill_%s_layer%s_%s", run, lf[i_layer], hf[i]);
            if ((c = extra_col(t, name)) >= 0) {
                free(t->val[m][c]);
                t->val[m][c] = strdup(lf[i]);
                if (!t->val[m][c])
                    c = -1;
            }
        }
        if (c < 0)
            rc = tg_fail(st, TG_ERR_NOMEM, "out of memory reading %s", path);
    }
    fclose(f);
    return rc;
}

/* ---------------------------------------------------------------- writing */

static void csv_text(FILE *f, const char *s)
{
    if (strpbrk(s, ",\"\n\r") == NULL) {
        fputs(s, f);
        return;
    }
    fputc('"', f);
    for (; *s; s++) {
        if (*s == '"')
            fputc('"', f);
        fputc(*s, f);
    }
    fputc('"', f);
}

/* A skill value as JSON: a number when it reads as one, null when empty. */
static void json_cell(FILE *f, const char *v)
{
    if (!v || !*v) {
        fputs("null", f);
        return;
    }
    char *end;
    const double x = strtod(v, &end);
    if (*end == '\0' && isfinite(x))
        tg_json_number(f, x); /* strtod also takes nan, inf, hex: not JSON */
    else
        tg_json_string(f, v);
}

tg_code tg_sweep_collect(const tg_sweep *sw, tg_status *st)
{
    const int M = sw->nmembers;
    tg_member_status *ms = calloc((size_t)M, sizeof *ms);
    double (*fig)[NFIG] = calloc((size_t)M, sizeof *fig);
    extra_table xt = {0};
    xt.nmembers = M;
    xt.val = calloc((size_t)M, sizeof *xt.val);
    tg_code rc = TG_OK;
    if (!ms || !fig || !xt.val)
        rc = tg_fail(st, TG_ERR_NOMEM, "out of memory collecting %d members", M);
    char path[TG_PATH_LEN + TG_SWEEP_NAME_LEN + 64], tmp[TG_PATH_LEN + TG_SWEEP_NAME_LEN + 80];
    for (int k = 0; k < M && rc == TG_OK; k++) {
        for (int i = 0; i < NFIG; i++)
            fig[k][i] = NAN;
        if ((rc = tg_sweep_read_status(sw, k, &ms[k], st)) != TG_OK)
            break;
        if (!ms[k].present || strcmp(ms[k].status, "done") != 0)
            continue;
        /* A done member whose files cannot be read keeps its row with empty
         * figures (a warning says why); the table of the others is written. */
        tg_status mst;
        tg_status_clear(&mst);
        snprintf(path, sizeof path, "%s/%s/%sbudget.nc", sw->directory, sw->name[k],
                 sw->kind == TG_SWEEP_TWIN ? "reference/" : "");
        tg_code mrc = budget_figures(path, fig[k], &mst);
        if (mrc == TG_OK && sw->kind == TG_SWEEP_TWIN) {
            snprintf(path, sizeof path, "%s/%s/skill.csv", sw->directory, sw->name[k]);
            mrc = skill_columns(path, k, &xt, &mst);
        }
        if (mrc == TG_ERR_NOMEM) {
            rc = tg_fail(st, mrc, "%s", mst.msg);
        } else if (mrc != TG_OK) {
            for (int i = 0; i < NFIG; i++)
                fig[k][i] = NAN;
            tg_log(TG_LOG_WARN, "sweep table: member %d (%s) is done but its figures are left "
                                "empty: %s", k, sw->name[k], mst.msg);
        }
    }

    /* sweep.csv */
    FILE *f = NULL;
    if (rc == TG_OK) {
        snprintf(path, sizeof path, "%s/sweep.csv", sw->directory);
        f = tg_tmp_open(path, tmp, sizeof tmp, st);
        if (!f)
            rc = st->code;
    }
    if (rc == TG_OK) {
        fputs("index,name", f);
        for (int a = 0; a < sw->naxes; a++) {
            fputc(',', f);
            csv_text(f, sw->axis[a].key);
        }
        fputs(",status,exit_status,message", f);
        for (int i = 0; i < NFIG; i++)
            fprintf(f, ",%s", fig_names[i]);
        for (int c = 0; c < xt.ncols; c++) {
            fputc(',', f);
            csv_text(f, xt.col[c]);
        }
        fputc('\n', f);
        for (int k = 0; k < M; k++) {
            fprintf(f, "%d,", k);
            csv_text(f, sw->name[k]);
            for (int a = 0; a < sw->naxes; a++) {
                fputc(',', f);
                csv_text(f, sw->axis[a].value[tg_sweep_choice(sw, k, a)]);
            }
            fprintf(f, ",%s,", ms[k].present ? ms[k].status : "not_run");
            if (ms[k].present && strcmp(ms[k].status, "running") != 0)
                fprintf(f, "%d", ms[k].exit_status);
            fputc(',', f);
            csv_text(f, ms[k].message);
            for (int i = 0; i < NFIG; i++) {
                fputc(',', f);
                if (isfinite(fig[k][i]))
                    fprintf(f, "%.10g", fig[k][i]);
            }
            for (int c = 0; c < xt.ncols; c++) {
                fputc(',', f);
                if (xt.val[k][c])
                    csv_text(f, xt.val[k][c]);
            }
            fputc('\n', f);
        }
        rc = tg_tmp_commit(f, tmp, path, st);
    }

    /* sweep.json */
    if (rc == TG_OK) {
        snprintf(path, sizeof path, "%s/sweep.json", sw->directory);
        f = tg_tmp_open(path, tmp, sizeof tmp, st);
        if (!f)
            rc = st->code;
    }
    if (rc == TG_OK) {
        fputs("{\n  \"sweep\": ", f);
        tg_json_string(f, sw->path);
        fputs(",\n  \"base\": ", f);
        tg_json_string(f, sw->base);
        fprintf(f, ",\n  \"kind\": \"%s\",\n  \"combine\": \"%s\",\n  \"varied\": [",
                sw->kind == TG_SWEEP_TWIN ? "twin" : "run",
                sw->combine == TG_SWEEP_ZIP ? "zip" : "product");
        for (int a = 0; a < sw->naxes; a++) {
            fputs(a ? ", " : "", f);
            tg_json_string(f, sw->axis[a].key);
        }
        fputs("],\n  \"members\": [\n", f);
        for (int k = 0; k < M; k++) {
            fprintf(f, "    {\"index\": %d, \"name\": ", k);
            tg_json_string(f, sw->name[k]);
            fputs(", \"values\": {", f);
            for (int a = 0; a < sw->naxes; a++) {
                fputs(a ? ", " : "", f);
                tg_json_string(f, sw->axis[a].key);
                fputs(": ", f);
                tg_json_string(f, sw->axis[a].value[tg_sweep_choice(sw, k, a)]);
            }
            fputs("},\n     \"status\": ", f);
            tg_json_string(f, ms[k].present ? ms[k].status : "not_run");
            fputs(", \"exit_status\": ", f);
            if (ms[k].present && strcmp(ms[k].status, "running") != 0)
                fprintf(f, "%d", ms[k].exit_status);
            else
                fputs("null", f);
            fputs(", \"message\": ", f);
            tg_json_string(f, ms[k].message);
            fputs(",\n     \"host\": ", f);
            tg_json_string(f, ms[k].host);
            fprintf(f, ", \"threads\": %d, \"start\": ", ms[k].threads);
            tg_json_string(f, ms[k].start);
            fputs(", \"end\": ", f);
            tg_json_string(f, ms[k].end);
            fputs(", \"seconds\": ", f);
            tg_json_number(f, ms[k].present ? ms[k].seconds : NAN);
            fputs(",\n     ", f);
            for (int i = 0; i < NFIG; i++) {
                fprintf(f, "%s\"%s\": ", i ? ", " : "", fig_names[i]);
                tg_json_number(f, fig[k][i]);
            }
            if (sw->kind == TG_SWEEP_TWIN) {
                fputs(",\n     \"skill\": {", f);
                int first = 1;
                for (int c = 0; c < xt.ncols; c++) {
                    if (!xt.val[k][c])
                        continue;
                    fputs(first ? "" : ", ", f);
                    first = 0;
                    tg_json_string(f, xt.col[c]);
                    fputs(": ", f);
                    json_cell(f, xt.val[k][c]);
                }
                fputc('}', f);
            }
            fprintf(f, "}%s\n", k + 1 < M ? "," : "");
        }
        fputs("  ]\n}\n", f);
        rc = tg_tmp_commit(f, tmp, path, st);
    }
    extra_free(&xt);
    free(ms);
    free(fig);
    return rc;
}
