#!/bin/bash
# sweep_common.sh - shared set-up of the sweep tests (test_sweep.sh,
# test_sweep_mpi.sh, test_sweep_slurm.sh); sourced, not run.
#
# Sources testlib.sh (ok/notok/finish/skip, tg, err_tail, ...), makes the
# scratch folder $T under $TG_TEST_TMPDIR (removed at exit unless
# TG_KEEP_TMP=1; more clean-up goes in tg_cleanup_hooks), and writes there:
#   base.ini   a tiny invented basin (Sellmoor, 33 x 33 points, 20 days):
#              about a tenth of a second per run
#   grid.ini   the 2 x 2 sweep every test runs: viscosity 400, 800 crossed
#              with seeds 1, 2, output folder given with --out
# and runs grid.ini with the local pool (--jobs 2) into $T/local
# (sweep_local); the MPI and Slurm tests compare their sweep.csv with it.
#
# Part of twingyre. GPL-3.0-or-later.

. "$(dirname "${BASH_SOURCE[0]}")/testlib.sh"
tg_scratch sweep
tg_need_program

cat >base.ini <<'EOF'
; The Sellmoor basin: an invented 1000 km double-gyre basin at 33 x 33
; points, 20 days from a slightly perturbed rest (sweep tests only).
[grid]
geometry = basin
size_km = 1000
points = 33

[layers]
thickness_m = 1000, 3000
reduced_gravity_m_s2 = 0.02

[planet]
coriolis_f0_per_s = 9.37e-5
beta_per_m_per_s = 1.75e-11

[wind]
profile = double_gyre
stress_amplitude_pa = 0.1
reference_density_kg_m3 = 1030

[dissipation]
bottom_drag_per_s = 1e-7
viscosity_m2_per_s = 500

[time]
step_s = 3600
duration_days = 20
max_cfl = 0.8

[initial]
state = noise
noise_amplitude_m2_per_s = 100
seed = 7

[output]
directory = not-used-by-sweeps
snapshot_every_days = 10
EOF

cat >grid.ini <<'EOF'
; 2 x 2 sweep of the sweep tests: two viscosities, two seeds.
[sweep]
base = base.ini
combine = product
seeds = 1, 2

[vary]
dissipation.viscosity_m2_per_s = 400, 800

[cluster]
job_name = tg-sweep-test
partition = tgsweep
time_limit = 00:05:00
cpus_per_task = 1
extra = --comment=twingyre-sweep-test
setup = echo "setup line of the sweep test ran"
EOF

# The columns sweep.csv must have for grid.ini (README, "Sweeps and ensembles").
grid_columns='index,name,dissipation.viscosity_m2_per_s,initial.seed,status,exit_status,message,days,energy_final,energy_mean,enstrophy_final,enstrophy_mean,energy_residual_relative'

sweep_local() {
    tg sweep grid.ini --jobs 2 --out "$T/local"
    if [ "$rc" -eq 0 ] && [ -f "$T/local/sweep.csv" ]; then
        ok "local pool: the 2 x 2 sweep completes with --jobs 2 (exit 0)"
    else
        notok "local pool: the 2 x 2 sweep completes with --jobs 2 (exit 0)" "$(err_tail)"
    fi
}
