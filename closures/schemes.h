/* schemes.h - the list of built-in closure schemes, one line each.
 *
 * Each line names the tg_closure_ops that closures/NAME.c defines as
 * `const tg_closure_ops tg_scheme_NAME`. registry.c expands this list twice
 * (declarations, then the table). Adding a scheme: one new file here, one
 * line below, and the file in Makefile.am's library sources.
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
TG_SCHEME(viscosity)
TG_SCHEME(smagorinsky)
TG_SCHEME(smagorinsky_biharmonic)
TG_SCHEME(leith)
TG_SCHEME(leith_qg)
TG_SCHEME(gradient_model)
TG_SCHEME(stochastic_additive)
TG_SCHEME(stochastic_scaling)
TG_SCHEME(coefficients)
TG_SCHEME(backscatter)
TG_SCHEME(backscatter_budget)
TG_SCHEME(thickness_diffusion)
TG_SCHEME(network)
