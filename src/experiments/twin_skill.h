/* twin_skill.h - the last stage of a twin experiment (twin.h): skill of each
 * coarse run against the coarse-grained reference, read back from
 * DIR/subgrid.nc and DIR/<run>/fields.nc, written to DIR/skill.csv,
 * DIR/skill.json and DIR/offline.nc. Internal to the library.
 *
 * Statistics are taken over the samples of the window (both ends
 * included), on the coarse grid, with the same operators for the reference
 * and the runs: velocities by centred differences of psi (fdops.h), kinetic
 * energy and spectra by the coarse geometry's spectrum (spectrum.h), node
 * weights the geometry's quadrature weights. Metrics per layer (skill.h):
 *   kinetic_energy_ratio     time-mean KE of the run / of the reference
 *   psi_pattern_correlation  of the time-mean psi maps (all output nodes)
 *   psi_normalized_rmse      RMSE of the time-mean psi / spatial standard
 *                            deviation of the reference's
 *   eke_pattern_correlation  of the eddy kinetic energy maps (active nodes)
 *   ke_spectrum_ratio        band-integrated time-mean spectra, run /
 *                            reference, bands (0, Kc/8], (Kc/8, Kc/4],
 *                            (Kc/4, Kc/2], (Kc/2, inf), Kc = pi / Dc (the
 *                            coarse grid's cutoff), by bin centre
 *   jet_length_km            where the time-mean zonal velocity of the
 *                            eastward jet falls to half its maximum,
 *                            from the western wall (basin only), and its
 *                            ratio to the reference's
 *   offline_r2, offline_correlation
 *                            the closure's PV tendency on each coarse-grained
 *                            reference sample against -S_q (subgrid.h),
 *                            pooled over samples and active nodes
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#ifndef TG_TWIN_SKILL_H
#define TG_TWIN_SKILL_H

#include "config.h"
#include "model.h"
#include "status.h"

#define TG_SKILL_BANDS 4

typedef struct {
    char name[160];      /* e.g. "smagorinsky", "stochastic_additive member 1" */
    char dir[160];       /* directory under DIR, e.g. "coarse-smagorinsky" */
    int closure;         /* index into tg_skill_job.closure */
    int member;
    tg_code status;      /* TG_OK or TG_ERR_BLOWUP */
    char message[TG_MSG_LEN]; /* why it stopped, when it did */
} tg_skill_run;

typedef struct {
    char label[64];      /* "none" or the scheme's name */
    char use[TG_RAW_TEXT];/* the compare entry as written */
    int stochastic;
    tg_model *model;     /* coarse model with this closure (NULL for none); borrowed */
} tg_skill_closure;

typedef struct {
    const char *dir;                 /* the twin's output directory */
    const tg_config *base;           /* the twin's config ([twin] keys) */
    const tg_config *coarse;         /* a coarse config (grid and layers) */
    const char *config_text;         /* resolved config, for the files' attributes */
    const char *command_line;
    int ratio;                       /* coarse spacing / reference spacing */
    double filter_width_m, cutoff_rad_m;
    int nclosures;
    tg_skill_closure *closure;
    int nruns;
    tg_skill_run *run;
} tg_skill_job;

/* Computes and writes the skill files; *table (may be NULL) gets the
 * printed table (malloc'ed). */
tg_code tg_twin_skill(const tg_skill_job *job, char **table, tg_status *st);

#endif
