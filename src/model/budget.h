/* budget.h - the per-step energy and enstrophy budget and its record layout.
 *
 * Energy per unit mass, domain mean (README, "Budgets"):
 *   E = (1/(H A)) int [ sum_k (H_k/2)|grad psi_k|^2 + sum_i f0^2/(2 g'_i)(psi_i - psi_{i+1})^2 ] dA
 * Potential enstrophy per layer: Z_k = (1/A) int q_k^2/2 dA (planetary term included).
 * Every step writes one record: the values at the end of the step, the
 * tendency (X^{n+1} - X^n)/dt, each term's contribution over the step
 * (positive = source), the residual = tendency - sum of the terms, and the
 * length of the step (time_step: adaptive steps vary).
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#ifndef TG_BUDGET_H
#define TG_BUDGET_H

#include "model.h"
#include "ncio.h"

/* Diagnostics of one state. */
typedef struct {
    double energy;
    double enstrophy[TG_MAX_LAYERS];
    double kinetic[TG_MAX_LAYERS];
    double mass_error[TG_MAX_LAYERS];
    double max_cfl;
    int cfl_layer;
    double cfl_x, cfl_y;
} tg_diag;

/* All of tg_diag in one pass over the fields (the same bits as
 * tg_model_energy, tg_model_enstrophy, tg_model_kinetic_energy,
 * tg_model_mass_error and tg_model_max_cfl). Uses m->rowsums. */
void tg_diag_compute(tg_model *m, tg_diag *d);

/* The first node of the active region where PV is NaN or Inf (its layer in
 * *layer), or -1. Only layers whose enstrophy in d (of the same state) is
 * not finite are searched: a NaN or Inf in q makes that sum NaN or Inf. */
long tg_diag_nonfinite(const tg_model *m, const tg_diag *d, int *layer);

/* Short names of the terms ("advection", "wind", ...), index TG_TERM_*. */
const char *tg_term_name(int t);

/* The budget.nc variable descriptions for nl layers; the strings live in
 * the struct, so it owns everything the descriptors point at. */
#define TG_BUDGET_MAX_VARS (32 + 2 * TG_MAX_CLOSURES)
typedef struct {
    int n;                      /* variables */
    int nl;                     /* layers */
    int active[TG_NTERMS];      /* terms listed (tg_model's term_active) */
    int ncomp;                  /* closure components with their own variables */
    tg_budget_var var[TG_BUDGET_MAX_VARS];
    char name[TG_BUDGET_MAX_VARS][48];
    char words[TG_BUDGET_MAX_VARS][128];
} tg_budget_layout;

/* `active` (may be NULL) says which terms get variables; NULL lists every
 * term except the periodic-only mean-flow conversion. The residuals always
 * use every term. */
void tg_budget_layout_init(tg_budget_layout *lay, int nl, const int *active);

/* Adds energy_closure_LABEL and enstrophy_closure_LABEL for each closure
 * component (after the totals), in `use` order. */
void tg_budget_layout_components(tg_budget_layout *lay, int ncomp, const char *const *labels);

/* Packs one record in the order of tg_budget_vars; returns the count. */
int tg_budget_pack(const tg_budget_layout *lay, double dt, const tg_diag *before,
                   const tg_diag *after, const tg_term_rates *r, double *values);

/* Largest |residual| relative to the largest |term| in a packed record,
 * for energy (*e) and over the layers' enstrophy (*z). */
void tg_budget_relative_residual(int nl, double dt, const tg_diag *before, const tg_diag *after,
                                 const tg_term_rates *r, double *e, double *z);

#endif
