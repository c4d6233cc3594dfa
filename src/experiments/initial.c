/* initial.c - the state a model starts from (initial.h).
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#include "initial.h"

#include <stdlib.h>
#include <string.h>

tg_code tg_state_from_file(tg_model *m, const char *path, tg_initial_info *info, tg_status *st)
{
    tg_initial_info own;
    if (!info)
        info = &own;
    const size_t n = (size_t)m->nl * m->nout * m->nout;
    double *psi = malloc(sizeof(double) * n), *q = malloc(sizeof(double) * n);
    if (!psi || !q) {
        free(psi);
        free(q);
        return tg_fail(st, TG_ERR_NOMEM, "%s: no memory to read the state (%d layers of %d x %d)",
                       path, m->nl, m->nout, m->nout);
    }
    tg_code rc = tg_initial_read(path, m->nout, m->nout, m->nl, psi, q, info, st);
    if (rc == TG_OK) {
        if (info->has_q && info->has_time)
            tg_model_set_q(m, q); /* a checkpoint: its PV, bitwise */
        else
            tg_model_set_psi(m, psi);
    }
    free(psi);
    free(q);
    return rc;
}

tg_code tg_state_initial(tg_model *m, const tg_config *cfg, tg_initial_info *info, tg_status *st)
{
    if (info)
        memset(info, 0, sizeof *info);
    switch (cfg->initial_kind) {
    case TG_INIT_REST:
        return TG_OK; /* tg_model_create leaves the state at rest */
    case TG_INIT_NOISE:
        tg_model_set_noise(m, cfg->noise_amplitude_m2_per_s, cfg->seed);
        return TG_OK;
    case TG_INIT_FILE:
        return tg_state_from_file(m, cfg->initial_path, info, st);
    }
    return tg_fail(st, TG_ERR_INTERNAL, "initial state: unknown kind %d", (int)cfg->initial_kind);
}
