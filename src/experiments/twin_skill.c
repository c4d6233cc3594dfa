/* twin_skill.c - skill of the coarse runs of a twin (twin_skill.h): reads
 * subgrid.nc and every run's fields.nc record by record, accumulates time
 * sums on the coarse grid, evaluates the closures offline, and writes
 * skill.csv, skill.json and offline.nc.
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#define _POSIX_C_SOURCE 200809L
#include "strbuf.h"
#include "twin_skill.h"
#include "textfile.h"

#include <errno.h>
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "closure_host.h"
#include "fdops.h"
#include "geometry.h"
#include "skill.h"
#include "spectrum.h"
#include "twin_io.h"

/* Time sums of one run (or of the reference) over the samples. */
typedef struct {
    long nt;
    double *psi;                   /* nl*no2 */
    double *su, *sv, *suu, *svv;   /* nl*na */
    double *spec;                  /* nl*nb */
    double ke[TG_MAX_LAYERS];
} stats;

/* Metrics of one layer of one run. */
typedef struct {
    double ke_ratio, psi_corr, psi_nrmse, eke_corr, band[TG_SKILL_BANDS];
    double jet_km, jet_ratio, off_r2, off_corr;
} layer_skill;

typedef struct {
    const tg_skill_job *job;
    tg_geometry *g;
    tg_spectrum *sp;
    int nl, no, nx, nb, basin;
    long no2, na, npc;
    double *work, *u, *v;        /* npc each */
    double *w_out, *w_act;       /* node weights, no2 and na */
    double *xa;                  /* x of the active columns */
    double x0;                   /* x of the western edge (first output node) */
    double *psi_in, *forc_in;    /* nl*no2 read buffers */
    double *pred, *targ;         /* na */
    double *eke_a, *eke_b, *mean_a, *mean_b; /* na or no2 scratch */
    double edges[TG_SKILL_BANDS + 1];
    stats ref;
    stats run;
    tg_skill_acc acc[TG_MAX_CLOSURES][TG_MAX_LAYERS];
    double *last_pred[TG_MAX_CLOSURES]; /* nl*no2: tendencies at the last sample */
    double *last_targ;                  /* nl*no2: -S_q at the last sample */
    double last_time_days;
    double *times;                      /* sample times, days */
    int nrec;
} sk_ctx;

static void stats_free(stats *s)
{
    free(s->psi);
    free(s->su);
    free(s->sv);
    free(s->suu);
    free(s->svv);
    free(s->spec);
}

static int stats_alloc(stats *s, const sk_ctx *k)
{
    memset(s, 0, sizeof *s);
    const size_t nl = (size_t)k->nl;
    s->psi = calloc(nl * (size_t)k->no2, sizeof(double));
    s->su = calloc(nl * (size_t)k->na, sizeof(double));
    s->sv = calloc(nl * (size_t)k->na, sizeof(double));
    s->suu = calloc(nl * (size_t)k->na, sizeof(double));
    s->svv = calloc(nl * (size_t)k->na, sizeof(double));
    s->spec = calloc(nl * (size_t)k->nb, sizeof(double));
    return s->psi && s->su && s->sv && s->suu && s->svv && s->spec;
}

static void stats_clear(stats *s, const sk_ctx *k)
{
    const size_t nl = (size_t)k->nl;
    s->nt = 0;
    memset(s->psi, 0, sizeof(double) * nl * (size_t)k->no2);
    memset(s->su, 0, sizeof(double) * nl * (size_t)k->na);
    memset(s->sv, 0, sizeof(double) * nl * (size_t)k->na);
    memset(s->suu, 0, sizeof(double) * nl * (size_t)k->na);
    memset(s->svv, 0, sizeof(double) * nl * (size_t)k->na);
    memset(s->spec, 0, sizeof(double) * nl * (size_t)k->nb);
    for (int l = 0; l < TG_MAX_LAYERS; l++)
        s->ke[l] = 0.0;
}

/* Output layout of one layer -> stored layout with its ring (k->work). */
static void unpack(sk_ctx *k, const double *out)
{
    const tg_geometry *g = k->g;
    for (int j = 0; j < k->no; j++)
        memcpy(k->work + (long)(j + g->o0) * g->ns + g->o0, out + (long)j * k->no,
               sizeof(double) * k->no);
    if (g->o0 == g->a0)
        g->ops->fill_ring(g, k->work, 0.0);
}

/* Adds one sample psi (nl*no2, output layout) to the sums. */
static tg_code stats_add(sk_ctx *k, stats *s, const double *psi, tg_status *st)
{
    const tg_geometry *g = k->g;
    for (int l = 0; l < k->nl; l++) {
        const double *pl = psi + l * k->no2;
        for (long p = 0; p < k->no2; p++)
            s->psi[l * k->no2 + p] += pl[p];
        unpack(k, pl);
        tg_ddy(g, k->work, k->u);
        tg_ddx(g, k->work, k->v);
        long q = l * k->na;
        for (int j = g->a0; j < g->a1; j++)
            for (int i = g->a0; i < g->a1; i++, q++) {
                const long p = (long)j * g->ns + i;
                const double u = -k->u[p], v = k->v[p];
                s->su[q] += u;
                s->sv[q] += v;
                s->suu[q] += u * u;
                s->svv[q] += v * v;
            }
        tg_code rc = tg_spectrum_compute(k->sp, k->g, k->work, pl[0], st);
        if (rc != TG_OK)
            return rc;
        for (int b = 0; b < k->nb; b++)
            s->spec[l * k->nb + b] += k->sp->e[b];
        s->ke[l] += tg_spectrum_total(k->sp);
    }
    s->nt++;
    return TG_OK;
}

/* Metrics of run stats a against the reference stats b, layer l. */
static void metrics(sk_ctx *k, const stats *a, const stats *b, int l, layer_skill *out)
{
    const double na_t = (double)a->nt, nb_t = (double)b->nt;
    out->ke_ratio = tg_skill_ratio(a->ke[l] / na_t, b->ke[l] / nb_t);
    for (long p = 0; p < k->no2; p++) {
        k->mean_a[p] = a->psi[l * k->no2 + p] / na_t;
        k->mean_b[p] = b->psi[l * k->no2 + p] / nb_t;
    }
    tg_skill_pattern(k->mean_a, k->mean_b, k->w_out, k->no2, &out->psi_corr, &out->psi_nrmse);
    const long o = l * k->na;
    tg_skill_eke(a->su + o, a->sv + o, a->suu + o, a->svv + o, k->na, a->nt, k->eke_a);
    tg_skill_eke(b->su + o, b->sv + o, b->suu + o, b->svv + o, k->na, b->nt, k->eke_b);
    double dummy;
    tg_skill_pattern(k->eke_a, k->eke_b, k->w_act, k->na, &out->eke_corr, &dummy);
    tg_skill_band_ratio(a->spec + l * k->nb, b->spec + l * k->nb, k->sp->k, k->nb, k->edges,
                        TG_SKILL_BANDS, out->band);
    out->jet_km = out->jet_ratio = NAN;
    if (k->basin) {
        for (long p = 0; p < k->na; p++) {
            k->eke_a[p] = a->su[o + p] / na_t;
            k->eke_b[p] = b->su[o + p] / nb_t;
        }
        const double la = tg_skill_jet_length(k->eke_a, k->nx, k->nx, k->xa, k->x0);
        const double lb = tg_skill_jet_length(k->eke_b, k->nx, k->nx, k->xa, k->x0);
        out->jet_km = la / 1e3;
        out->jet_ratio = tg_skill_ratio(la, lb);
    }
}

static double ref_jet_km(sk_ctx *k, int l)
{
    if (!k->basin)
        return NAN;
    const long o = l * k->na;
    for (long p = 0; p < k->na; p++)
        k->eke_b[p] = k->ref.su[o + p] / (double)k->ref.nt;
    return tg_skill_jet_length(k->eke_b, k->nx, k->nx, k->xa, k->x0) / 1e3;
}

/* ------------------------------------------------------------------ */
/* The reference samples and the offline evaluation                    */
/* ------------------------------------------------------------------ */

static tg_code reference_pass(sk_ctx *k, tg_status *st)
{
    const tg_skill_job *job = k->job;
    const tg_geometry *g = k->g;
    char path[TG_PATH_LEN + 32];
    snprintf(path, sizeof path, "%s/subgrid.nc", job->dir);
    tg_record_reader *rd = tg_record_reader_open(path, k->no, k->no, k->nl, st);
    if (!rd)
        return st->code ? st->code : TG_ERR_IO;
    tg_code rc = TG_OK;
    k->nrec = tg_record_reader_count(rd);
    k->times = malloc(sizeof(double) * (size_t)(k->nrec > 0 ? k->nrec : 1));
    if (!k->times) {
        tg_record_reader_close(rd);
        return tg_fail(st, TG_ERR_NOMEM, "skill: no memory");
    }
    if (k->nrec < 1) {
        tg_record_reader_close(rd);
        return tg_fail(st, TG_ERR_IO, "%s: no samples", path);
    }
    for (int c = 0; c < job->nclosures; c++)
        for (int l = 0; l < k->nl; l++)
            tg_skill_acc_init(&k->acc[c][l]);
    for (int rec = 0; rec < k->nrec && rc == TG_OK; rec++) {
        if ((rc = tg_record_reader_time(rd, rec, &k->times[rec], st)) != TG_OK ||
            (rc = tg_record_reader_get(rd, "psi", rec, 0, k->psi_in, st)) != TG_OK ||
            (rc = tg_record_reader_get(rd, "subgrid_forcing", rec, 0, k->forc_in, st)) != TG_OK ||
            (rc = stats_add(k, &k->ref, k->psi_in, st)) != TG_OK)
            break;
        const int last = rec == k->nrec - 1;
        /* Target -S_q on the active nodes, contiguous per layer. */
        for (int c = 0; c < job->nclosures && rc == TG_OK; c++) {
            tg_model *m = job->closure[c].model;
            const double *tend = NULL;
            if (m) {
                tg_model_set_psi(m, k->psi_in);
                tg_closure_input in = {m->psi, m->q, m->zeta, m->wall, 0, 0};
                if ((rc = tg_closure_host_eval(m->closures, &in, st)) != TG_OK)
                    break;
                tend = tg_closure_host_tend(m->closures, 0);
            }
            for (int l = 0; l < k->nl; l++) {
                long q = 0;
                for (int j = g->a0; j < g->a1; j++)
                    for (int i = g->a0; i < g->a1; i++, q++) {
                        const long po = l * k->no2 + (long)(j - g->o0) * k->no + (i - g->o0);
                        k->targ[q] = -k->forc_in[po];
                        k->pred[q] = tend ? tend[l * k->npc + (long)j * g->ns + i] : 0.0;
                        if (last) {
                            k->last_pred[c][po] = k->pred[q];
                            k->last_targ[po] = k->targ[q];
                        }
                    }
                tg_skill_acc_add(&k->acc[c][l], k->pred, k->targ, k->na);
            }
        }
        if (last)
            k->last_time_days = k->times[rec];
    }
    tg_record_reader_close(rd);
    return rc;
}

/* Sums of one coarse run; TG_ERR_BLOWUP-like mismatches become a status. */
static tg_code run_pass(sk_ctx *k, tg_skill_run *r, tg_status *st)
{
    char path[TG_PATH_LEN + 200];
    snprintf(path, sizeof path, "%s/%s/fields.nc", k->job->dir, r->dir);
    tg_record_reader *rd = tg_record_reader_open(path, k->no, k->no, k->nl, st);
    if (!rd)
        return st->code ? st->code : TG_ERR_IO;
    tg_code rc = TG_OK;
    stats_clear(&k->run, k);
    const int n = tg_record_reader_count(rd);
    if (n < k->nrec) {
        tg_record_reader_close(rd);
        return tg_fail(st, TG_ERR_IO, "%s has %d snapshots, expected %d (one per sample)", path,
                       n, k->nrec);
    }
    for (int rec = 0; rec < k->nrec && rc == TG_OK; rec++) {
        double t;
        if ((rc = tg_record_reader_time(rd, rec, &t, st)) != TG_OK)
            break;
        if (fabs(t - k->times[rec]) > 1e-6 * fmax(1.0, fabs(t))) {
            rc = tg_fail(st, TG_ERR_INTERNAL,
                         "%s: snapshot %d is at day %.9g but the reference sample is at day %.9g",
                         path, rec, t, k->times[rec]);
            break;
        }
        if ((rc = tg_record_reader_get(rd, "psi", rec, 0, k->psi_in, st)) != TG_OK)
            break;
        rc = stats_add(k, &k->run, k->psi_in, st);
    }
    tg_record_reader_close(rd);
    return rc;
}

/* ------------------------------------------------------------------ */
/* Writing                                                             */
/* ------------------------------------------------------------------ */


static void csv_num(FILE *f, double v)
{
    if (isfinite(v))
        fprintf(f, ",%.10g", v);
    else
        fputs(",", f);
}

static const char *status_word(tg_code c)
{
    return c == TG_OK ? "ok" : c == TG_ERR_BLOWUP ? "unstable" : "failed";
}

static void cell(tg_strbuf *b, double v, const char *fmt)
{
    if (isfinite(v))
        tg_sb_printf(b, fmt, v);
    else
        tg_sb_printf(b, "%9s", "-");
}

static const char *metric_names[] = {"kinetic_energy_ratio", "psi_pattern_correlation",
                                     "psi_normalized_rmse", "eke_pattern_correlation"};

/* DIR/skill.csv: one row per run and layer. */
static tg_code write_csv(sk_ctx *k, const layer_skill *res, tg_status *st)
{
    const tg_skill_job *job = k->job;
    char path[TG_PATH_LEN + 32], tmp[TG_PATH_LEN + 40];
    snprintf(path, sizeof path, "%s/skill.csv", job->dir);
    FILE *f = tg_tmp_open(path, tmp, sizeof tmp, st);
    if (!f)
        return st->code;
    fprintf(f, "run,directory,closure,member,status,layer");
    for (int m = 0; m < 4; m++)
        fprintf(f, ",%s", metric_names[m]);
    for (int band = 0; band < TG_SKILL_BANDS; band++)
        fprintf(f, ",ke_spectrum_ratio_band%d", band + 1);
    fprintf(f, ",jet_length_km,jet_length_reference_km,jet_length_ratio,offline_r2,"
               "offline_correlation\n");
    for (int r = 0; r < job->nruns; r++) {
        const tg_skill_run *run = &job->run[r];
        for (int l = 0; l < k->nl; l++) {
            const layer_skill *s = &res[r * k->nl + l];
            fprintf(f, "%s,%s,%s,%d,%s,%d", run->name, run->dir,
                    job->closure[run->closure].label, run->member, status_word(run->status),
                    l + 1);
            csv_num(f, s->ke_ratio);
            csv_num(f, s->psi_corr);
            csv_num(f, s->psi_nrmse);
            csv_num(f, s->eke_corr);
            for (int band = 0; band < TG_SKILL_BANDS; band++)
                csv_num(f, s->band[band]);
            csv_num(f, s->jet_km);
            csv_num(f, ref_jet_km(k, l));
            csv_num(f, s->jet_ratio);
            csv_num(f, s->off_r2);
            csv_num(f, s->off_corr);
            fputc('\n', f);
        }
    }
    return tg_tmp_commit(f, tmp, path, st);
}

/* One run's skill in layer l (0-based) as a skill.json object, after a
 * comma unless it is the first layer. */
static void json_layer(FILE *f, const layer_skill *s, int l)
{
    fprintf(f, "%s\n       {\"layer\": %d, \"kinetic_energy_ratio\": ", l ? "," : "", l + 1);
    tg_json_number(f, s->ke_ratio);
    fprintf(f, ", \"psi_pattern_correlation\": ");
    tg_json_number(f, s->psi_corr);
    fprintf(f, ", \"psi_normalized_rmse\": ");
    tg_json_number(f, s->psi_nrmse);
    fprintf(f, ", \"eke_pattern_correlation\": ");
    tg_json_number(f, s->eke_corr);
    fprintf(f, ", \"ke_spectrum_ratio\": [");
    for (int band = 0; band < TG_SKILL_BANDS; band++) {
        fputs(band ? ", " : "", f);
        tg_json_number(f, s->band[band]);
    }
    fprintf(f, "], \"jet_length_km\": ");
    tg_json_number(f, s->jet_km);
    fprintf(f, ", \"jet_length_ratio\": ");
    tg_json_number(f, s->jet_ratio);
    fprintf(f, ", \"offline_r2\": ");
    tg_json_number(f, s->off_r2);
    fprintf(f, ", \"offline_correlation\": ");
    tg_json_number(f, s->off_corr);
    fputs("}", f);
}

/* DIR/skill.json: the set-up, the reference, the closures and every run's
 * skill per layer. */
static tg_code write_json(sk_ctx *k, const layer_skill *res, tg_status *st)
{
    const tg_skill_job *job = k->job;
    const tg_config *b = job->base;
    char path[TG_PATH_LEN + 32], tmp[TG_PATH_LEN + 40];
    snprintf(path, sizeof path, "%s/skill.json", job->dir);
    FILE *f = tg_tmp_open(path, tmp, sizeof tmp, st);
    if (!f)
        return st->code;
    fprintf(f, "{\n  \"format\": \"twingyre twin skill 1\",\n  \"geometry\": ");
    tg_json_string(f, job->coarse->geometry == TG_GEOM_PERIODIC ? "periodic" : "basin");
    fprintf(f, ",\n  \"layers\": %d,\n  \"reference_points\": %d,\n  \"coarse_points\": %d,\n"
               "  \"coarsening_ratio\": %d,\n  \"filter\": ",
            k->nl, b->twin_reference_points, b->twin_coarse_points, job->ratio);
    tg_json_string(f, b->twin_filter == TG_TWIN_FILTER_SHARP ? "sharp" : "gaussian");
    fprintf(f, ",\n  \"filter_width_m\": ");
    tg_json_number(f, job->filter_width_m);
    fprintf(f, ",\n  \"spinup_days\": ");
    tg_json_number(f, b->twin_spinup_days);
    fprintf(f, ",\n  \"analysis_days\": ");
    tg_json_number(f, b->twin_analysis_days);
    fprintf(f, ",\n  \"sample_every_days\": ");
    tg_json_number(f, b->twin_sample_every_days);
    fprintf(f, ",\n  \"samples\": %d,\n  \"spectrum_bands_rad_per_m\": [", k->nrec);
    for (int band = 0; band < TG_SKILL_BANDS; band++) {
        fprintf(f, "%s[", band ? ", " : "");
        tg_json_number(f, k->edges[band]);
        fputs(", ", f);
        tg_json_number(f, k->edges[band + 1]);
        fputs("]", f);
    }
    fprintf(f, "],\n  \"reference\": {\"kinetic_energy_m2_s2\": [");
    for (int l = 0; l < k->nl; l++) {
        fputs(l ? ", " : "", f);
        tg_json_number(f, k->ref.ke[l] / (double)k->ref.nt);
    }
    fprintf(f, "], \"jet_length_km\": [");
    for (int l = 0; l < k->nl; l++) {
        fputs(l ? ", " : "", f);
        tg_json_number(f, ref_jet_km(k, l));
    }
    fprintf(f, "]},\n  \"closures\": [");
    for (int c = 0; c < job->nclosures; c++) {
        fprintf(f, "%s\n    {\"name\": ", c ? "," : "");
        tg_json_string(f, job->closure[c].label);
        fprintf(f, ", \"compare_entry\": ");
        tg_json_string(f, job->closure[c].use);
        fprintf(f, ", \"stochastic\": %s}", job->closure[c].stochastic ? "true" : "false");
    }
    fprintf(f, "\n  ],\n  \"runs\": [");
    for (int r = 0; r < job->nruns; r++) {
        const tg_skill_run *run = &job->run[r];
        fprintf(f, "%s\n    {\"name\": ", r ? "," : "");
        tg_json_string(f, run->name);
        fprintf(f, ", \"closure\": ");
        tg_json_string(f, job->closure[run->closure].label);
        fprintf(f, ", \"member\": %d, \"directory\": ", run->member);
        tg_json_string(f, run->dir);
        fprintf(f, ", \"status\": ");
        tg_json_string(f, status_word(run->status));
        fprintf(f, ", \"message\": ");
        tg_json_string(f, run->message);
        fprintf(f, ",\n     \"layers\": [");
        for (int l = 0; l < k->nl; l++)
            json_layer(f, &res[r * k->nl + l], l);
        fprintf(f, "\n     ]}");
    }
    fprintf(f, "\n  ]\n}\n");
    return tg_tmp_commit(f, tmp, path, st);
}

/* DIR/offline.nc: -S_q and each closure's tendency at the last sample. */
static tg_code write_offline(const sk_ctx *k, tg_status *st)
{
    const tg_skill_job *job = k->job;
    char path[TG_PATH_LEN + 32];
    tg_twin_var vars[TG_MAX_CLOSURES + 1];
    const double *data[TG_MAX_CLOSURES + 1];
    char names[TG_MAX_CLOSURES][96], words[TG_MAX_CLOSURES][200];
    int nv = 0;
    vars[nv] = (tg_twin_var){"subgrid_pv_tendency", "s-2",
                             "-S_q, the PV tendency a closure should produce, at the last "
                             "sample (interior nodes)", 1};
    data[nv++] = k->last_targ;
    for (int c = 0; c < job->nclosures; c++) {
        if (!job->closure[c].model)
            continue;
        snprintf(names[c], sizeof names[c], "tendency_%s", job->closure[c].label);
        snprintf(words[c], sizeof words[c],
                 "PV tendency of closure %s (member 0) on the coarse-grained reference at "
                 "the last sample (interior nodes)", job->closure[c].label);
        vars[nv] = (tg_twin_var){names[c], "s-2", words[c], 1};
        data[nv++] = k->last_pred[c];
    }
    const tg_geometry *g = k->g;
    tg_nc_grid gr = {.nx = k->no, .ny = k->no, .nlayers = k->nl, .x = g->coord + g->o0,
                     .y = g->coord + g->o0, .config_text = job->config_text,
                     .command_line = job->command_line ? job->command_line : "",
                     .title = "twingyre twin: closures' PV tendencies against the sub-grid "
                              "PV tendency"};
    snprintf(path, sizeof path, "%s/offline.nc", job->dir);
    return tg_map_file_write(path, &gr, k->last_time_days * 86400.0, vars, nv, data, NULL, 0,
                             st);
}

/* The printed table: a row per run and layer (NUL-terminated, malloc'd,
 * in *table). */
static tg_code format_table(const sk_ctx *k, const layer_skill *res, char **table, tg_status *st)
{
    const tg_skill_job *job = k->job;
    const tg_config *b = job->base;
    tg_strbuf t = {0};
    tg_sb_printf(&t,
           "Skill of the coarse runs against the coarse-grained reference "
           "(%d x %d -> %d x %d points, %s filter; %d samples over %g days)\n",
           b->twin_reference_points, b->twin_reference_points, b->twin_coarse_points,
           b->twin_coarse_points,
           b->twin_filter == TG_TWIN_FILTER_SHARP ? "sharp" : "Gaussian", k->nrec,
           b->twin_analysis_days);
    tg_sb_printf(&t, "%-28s %5s %9s %9s %9s %9s %9s %9s %9s %9s %9s %9s %9s\n", "run", "layer",
           "KE", "psi", "psi", "EKE", "spectrum", "", "", "", "jet", "offline", "offline");
    tg_sb_printf(&t, "%-28s %5s %9s %9s %9s %9s %9s %9s %9s %9s %9s %9s %9s\n", "", "",
           "ratio", "corr", "nRMSE", "corr", "band 1", "band 2", "band 3", "band 4",
           "ratio", "R2", "corr");
    for (int r = 0; r < job->nruns; r++) {
        const tg_skill_run *run = &job->run[r];
        for (int l = 0; l < k->nl; l++) {
            const layer_skill *s = &res[r * k->nl + l];
            tg_sb_printf(&t, "%-28.28s %5d", l == 0 ? run->name : "", l + 1);
            if (run->status != TG_OK) {
                tg_sb_printf(&t, "  %s\n", l == 0 ? "unstable: no statistics" : "");
                continue;
            }
            cell(&t, s->ke_ratio, " %9.3f");
            cell(&t, s->psi_corr, " %9.3f");
            cell(&t, s->psi_nrmse, " %9.3f");
            cell(&t, s->eke_corr, " %9.3f");
            for (int band = 0; band < TG_SKILL_BANDS; band++)
                cell(&t, s->band[band], " %9.3f");
            cell(&t, s->jet_ratio, " %9.3f");
            cell(&t, s->off_r2, " %9.3f");
            cell(&t, s->off_corr, " %9.3f");
            tg_sb_printf(&t, "\n");
        }
    }
    tg_sb_printf(&t, "(ratios: run / coarse-grained reference; '-': not defined; details in "
               "%s/skill.json)\n", job->dir);
    if (t.oom) {
        free(t.s);
        return tg_fail(st, TG_ERR_NOMEM, "skill: no memory for the table");
    }
    *table = t.s;
    return TG_OK;
}

/* skill.csv, skill.json, offline.nc and, when table is not NULL, the
 * printed table, in this order; the first failure stops. */
static tg_code write_all(sk_ctx *k, layer_skill *res, char **table, tg_status *st)
{
    tg_code rc;
    if ((rc = write_csv(k, res, st)) != TG_OK || (rc = write_json(k, res, st)) != TG_OK ||
        (rc = write_offline(k, st)) != TG_OK)
        return rc;
    return table ? format_table(k, res, table, st) : TG_OK;
}

/* ------------------------------------------------------------------ */
/* Entry                                                               */
/* ------------------------------------------------------------------ */

static void sk_free(sk_ctx *k)
{
    stats_free(&k->ref);
    stats_free(&k->run);
    free(k->work);
    free(k->u);
    free(k->v);
    free(k->w_out);
    free(k->w_act);
    free(k->xa);
    free(k->psi_in);
    free(k->forc_in);
    free(k->pred);
    free(k->targ);
    free(k->eke_a);
    free(k->eke_b);
    free(k->mean_a);
    free(k->mean_b);
    for (int c = 0; c < TG_MAX_CLOSURES; c++)
        free(k->last_pred[c]);
    free(k->last_targ);
    free(k->times);
    tg_spectrum_destroy(k->sp);
    tg_geometry_destroy(k->g);
}

/* Everything the passes use, made once from the job's coarse config: the
 * coarse geometry and spectrum, the sizes, the work arrays and statistics,
 * the quadrature weights of the output and active nodes, and the offline
 * fields filled with the fill value. */
static tg_code sk_setup(sk_ctx *k, const tg_skill_job *job, tg_status *st)
{
    k->job = job;
    k->g = tg_geometry_create(job->coarse, st);
    if (!k->g || !(k->sp = tg_spectrum_create(k->g, st)))
        return st->code ? st->code : TG_ERR_INTERNAL;
    const tg_geometry *g = k->g;
    k->nl = job->coarse->nlayers;
    k->no = g->o1 - g->o0;
    k->nx = g->a1 - g->a0;
    k->nb = k->sp->nbins;
    k->no2 = (long)k->no * k->no;
    k->na = (long)k->nx * k->nx;
    k->npc = (long)g->ns * g->ns;
    k->basin = job->coarse->geometry == TG_GEOM_BASIN; /* the jet metric is defined in a basin */
    k->x0 = g->coord[g->o0];
    const double kc = job->cutoff_rad_m;
    const double e[TG_SKILL_BANDS + 1] = {0.0, kc / 8, kc / 4, kc / 2, INFINITY};
    memcpy(k->edges, e, sizeof e);
    const size_t nl = (size_t)k->nl;
    k->work = calloc((size_t)k->npc, sizeof(double));
    k->u = calloc((size_t)k->npc, sizeof(double));
    k->v = calloc((size_t)k->npc, sizeof(double));
    k->w_out = malloc(sizeof(double) * (size_t)k->no2);
    k->w_act = malloc(sizeof(double) * (size_t)k->na);
    k->xa = malloc(sizeof(double) * (size_t)k->nx);
    k->psi_in = malloc(sizeof(double) * nl * (size_t)k->no2);
    k->forc_in = malloc(sizeof(double) * nl * (size_t)k->no2);
    k->pred = malloc(sizeof(double) * (size_t)k->na);
    k->targ = malloc(sizeof(double) * (size_t)k->na);
    k->eke_a = malloc(sizeof(double) * (size_t)k->no2);
    k->eke_b = malloc(sizeof(double) * (size_t)k->no2);
    k->mean_a = malloc(sizeof(double) * (size_t)k->no2);
    k->mean_b = malloc(sizeof(double) * (size_t)k->no2);
    k->last_targ = malloc(sizeof(double) * nl * (size_t)k->no2);
    int ok = k->work && k->u && k->v && k->w_out && k->w_act && k->xa && k->psi_in &&
             k->forc_in && k->pred && k->targ && k->eke_a && k->eke_b && k->mean_a &&
             k->mean_b && k->last_targ && stats_alloc(&k->ref, k) &&
             stats_alloc(&k->run, k);
    for (int c = 0; c < job->nclosures && ok; c++)
        ok = (k->last_pred[c] = malloc(sizeof(double) * nl * (size_t)k->no2)) != NULL;
    if (!ok)
        return tg_fail(st, TG_ERR_NOMEM, "skill: no memory for the statistics");
    for (int j = 0; j < k->no; j++)
        for (int i = 0; i < k->no; i++)
            k->w_out[(long)j * k->no + i] = g->weight[(long)(j + g->o0) * g->ns + i + g->o0];
    for (int j = 0; j < k->nx; j++)
        for (int i = 0; i < k->nx; i++)
            k->w_act[(long)j * k->nx + i] = g->weight[(long)(j + g->a0) * g->ns + i + g->a0];
    for (int i = 0; i < k->nx; i++)
        k->xa[i] = g->coord[g->a0 + i];
    /* Nodes where -S_q is not defined keep the fill value in offline.nc. */
    for (size_t p = 0; p < nl * (size_t)k->no2; p++) {
        k->last_targ[p] = TG_TWIN_FILL;
        for (int c = 0; c < job->nclosures; c++)
            k->last_pred[c][p] = TG_TWIN_FILL;
    }
    return TG_OK;
}

tg_code tg_twin_skill(const tg_skill_job *job, char **table, tg_status *st)
{
    sk_ctx *k = calloc(1, sizeof *k);
    layer_skill *res = NULL;
    if (!k)
        return tg_fail(st, TG_ERR_NOMEM, "skill: no memory");
    tg_code rc = sk_setup(k, job, st);
    if (rc != TG_OK)
        goto done;
    const size_t nl = (size_t)k->nl;
    if (!(res = calloc((size_t)job->nruns * nl, sizeof *res))) {
        rc = tg_fail(st, TG_ERR_NOMEM, "skill: no memory for the statistics");
        goto done;
    }

    if ((rc = reference_pass(k, st)) != TG_OK)
        goto done;
    for (int r = 0; r < job->nruns; r++) {
        tg_skill_run *run = &job->run[r];
        layer_skill *s = &res[(size_t)r * nl];
        for (int l = 0; l < k->nl; l++) {
            s[l] = (layer_skill){NAN, NAN, NAN, NAN, {NAN, NAN, NAN, NAN}, NAN, NAN, NAN, NAN};
            tg_skill_acc_result(&k->acc[run->closure][l], &s[l].off_r2, &s[l].off_corr);
        }
        if (run->status != TG_OK)
            continue;
        if ((rc = run_pass(k, run, st)) != TG_OK)
            goto done;
        for (int l = 0; l < k->nl; l++) {
            const double r2 = s[l].off_r2, cr = s[l].off_corr;
            metrics(k, &k->run, &k->ref, l, &s[l]);
            s[l].off_r2 = r2;
            s[l].off_corr = cr;
        }
    }
    rc = write_all(k, res, table, st);

done:
    free(res);
    sk_free(k);
    free(k);
    return rc;
}
