/* initial.h - the state a model starts from: `[initial] state` (rest,
 * noise or a state file) and state files read into a model.
 *
 * One rule for every command that reads a state file (run, twin, vet): a
 * checkpoint (a file with q, time and step) gives its PV exactly, so a
 * resumed run repeats the uninterrupted one bit for bit; any other file
 * (a fields.nc, a file a user made) gives its streamfunction, from which q
 * is computed (README, "Starting, stopping and resuming").
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#ifndef TG_INITIAL_H
#define TG_INITIAL_H

#include "config.h"
#include "model.h"
#include "ncio.h"
#include "status.h"

/* Sets m's state from the file at `path` by the rule above; info (may be
 * NULL) tells what the file held (ncio.h). m->step is left alone: a caller
 * that resumes a checkpoint sets it from info. Reads into two temporary
 * arrays of nl*nout*nout values, freed before returning. */
tg_code tg_state_from_file(tg_model *m, const char *path, tg_initial_info *info, tg_status *st);

/* Sets m's state from cfg's [initial] section: rest (m as tg_model_create
 * left it), noise (amplitude and seed) or a file (tg_state_from_file).
 * info (may be NULL) is all zero unless a file was read. */
tg_code tg_state_initial(tg_model *m, const tg_config *cfg, tg_initial_info *info, tg_status *st);

#endif
