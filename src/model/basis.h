/* basis.h - a library of named basis terms of the resolved state, and the
 * coefficients file that chooses and weights them.
 *
 * A learned closure writes the PV tendency of layer k as
 *     dq_k/dt = sum_t c_{k,t} T_t(psi_k, q_k, zeta_k)
 * with T_t a term of the table below and c_{k,t} a fitted coefficient
 * (sparse regression of the sub-grid forcing on a library of candidate
 * terms; Brunton, Proctor & Kutz 2016, Proc. Natl. Acad. Sci. 113,
 * 3932-3937). The unit of c_{k,t} is s-2
 * divided by the unit of T_t, so that every product is a PV tendency.
 * The closure closures/coefficients.c evaluates the sum; a fitting command
 * evaluates the same terms on coarse-grained data with tools built for its
 * own grid, so the definitions below are the only copy.
 *
 * Terms (x, y derivatives; u = -psi_y, v = psi_x; zeta = lap psi; q the
 * PV of the view: in a basin it includes beta (y - y0), in a periodic
 * domain it is the eddy PV; the Laplacians remove that linear part, and in
 * div_gradu_gradq its share beta d_y(u_x + v_y) vanishes for non-divergent
 * flow, on the grid up to O(dx^2)):
 *   zeta                   zeta                                      s-1
 *   lap_zeta               lap zeta                                  m-2 s-1
 *   lap2_zeta              lap lap zeta                              m-4 s-1
 *   lap_q                  lap q                                     m-2 s-1
 *   lap2_q                 lap lap q                                 m-4 s-1
 *   jac_psi_lapzeta        J(psi, lap zeta)                          m-2 s-2
 *   jac_psi_lapq           J(psi, lap q)                             m-2 s-2
 *   jac_zeta_lapzeta       J(zeta, lap zeta)                         m-4 s-2
 *   div_gradu_gradzeta     d_i (d_k u_i d_k zeta)                    m-2 s-2
 *   div_gradu_gradq        d_i (d_k u_i d_k q)                       m-2 s-2
 *   curl_div_zeta_deform   (d_xx - d_yy)(zeta Dt) + 2 d_xy (zeta Ds) m-2 s-2
 *   div_absgradzeta_gradzeta div(|grad zeta| grad zeta)              m-3 s-2
 *   div_strain_gradzeta    div(|S| grad zeta)                        m-2 s-2
 * (The curl-divergence of the gradient-model momentum flux G_ij =
 * d_k u_i d_k u_j is half of curl_div_zeta_deform for non-divergent flow,
 * so it is not a term; files naming it, as curl_div_gradu_gradu, are read
 * as curl_div_zeta_deform with half the coefficient, with a note.)
 * with J(a, b) = a_x b_y - a_y b_x, Ds = u_y + v_x (shearing deformation),
 * Dt = u_x - v_y (stretching deformation), |S| = sqrt(Ds^2 + Dt^2), and
 * curl div A = (d_xx - d_yy) A_xy + d_xy (A_yy - A_xx) for a symmetric
 * tensor A (the vorticity tendency of the momentum tendency div A).
 * basis.c documents each term's source and discretisation.
 *
 * Evaluation uses only the closure tools (closure.h) and plain loops over
 * the active nodes reading one ring node, so it never knows the geometry
 * and gives the same values for any thread count.
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#ifndef TG_BASIS_H
#define TG_BASIS_H

#include "closure.h"
#include "status.h"

/* One row of the term table. */
typedef struct {
    const char *name;       /* used in coefficients files */
    const char *formula;    /* the continuous definition, in words and symbols */
    const char *term_unit;  /* unit of the term */
    const char *coef_unit;  /* unit of its coefficient: s-2 / term_unit */
    const char *meaning;    /* one line: what it represents */
} tg_basis_term;

/* The table. */
int tg_basis_count(void);
const tg_basis_term *tg_basis_term_at(int i);   /* NULL outside 0..count-1 */
int tg_basis_find(const char *name);            /* index, or -1 */

/* Work arrays for evaluating terms on one grid (ns x ns stored, active
 * nodes a0..a1-1, spacing dx). `tools` must stay valid for the life of the
 * object; it is used for every evaluation. */
typedef struct tg_basis tg_basis;

tg_basis *tg_basis_create(int ns, int a0, int a1, double dx, const tg_closure_tools *tools,
                          tg_status *st);
void tg_basis_destroy(tg_basis *b);

/* Writes term `term` of one layer on the active nodes of `out` (ns*ns; the
 * ring of `out` is not touched). psi, q, zeta: that layer's fields with
 * their rings filled as in a closure view (zeta's ring holds the wall
 * vorticity). u and v (rings filled) are accepted for terms that use the
 * velocity itself; the present terms are Galilean invariant and take the
 * velocity gradients from psi, so they do not read u and v (may be NULL).
 * Allocates nothing; `out` must not alias an input. */
tg_code tg_basis_eval(const tg_basis *b, int term, const double *psi, const double *q,
                      const double *zeta, const double *u, const double *v, double *out,
                      tg_status *st);

/* ---- Coefficients files -------------------------------------------------
 *
 * Plain text, read line by line:
 *   - a line whose first non-blank character is '#' is a comment; the
 *     comments before the first coefficient are the header, which must
 *     contain the units line, exactly (blanks between words are free)
 *         # units: coefficient in s-2 per term unit
 *     meaning that each coefficient is in the SI unit of its term's
 *     coef_unit (the product with the term is a PV tendency in s-2);
 *   - blank lines are ignored, and '#' ends the data on any line;
 *   - every other line is `LAYER TERM COEFFICIENT [STD]`, separated by
 *     blanks: LAYER is 1..nlayers (top = 1) or `all`; TERM a name of the
 *     table; COEFFICIENT a finite real; STD, optional, a finite real >= 0,
 *     the standard deviation of the coefficient (used when sampling).
 *   - a (layer, term) pair appears at most once (`all` counts as every
 *     layer), except that curl_div_gradu_gradu (read as half of
 *     curl_div_zeta_deform) and curl_div_zeta_deform for the same layer
 *     add up, so that files written before the term was folded still load.
 * Errors name FILE:LINE. */

#define TG_BASIS_UNITS_LINE "# units: coefficient in s-2 per term unit"

typedef struct {
    int layer;      /* 0-based layer, or -1 for `all` */
    int term;       /* index in the table */
    double mean;    /* the coefficient as written */
    double std;     /* its standard deviation; -1 when not given */
    int line;       /* line in the file */
    int renamed;    /* 1: given under the former name curl_div_gradu_gradu; 2: merged
                       with the curl_div_zeta_deform line of the same layer; 0 otherwise */
} tg_coef_entry;

typedef struct {
    int n;
    tg_coef_entry *e;   /* n entries in file order, owned (tg_coef_list_free) */
} tg_coef_list;

/* Reads a coefficients file for a model of `nlayers` layers. On failure
 * (TG_ERR_CONFIG; the message starts with "PATH:LINE: " or "PATH: ") the
 * list is left empty. */
tg_code tg_coef_read(const char *path, int nlayers, tg_coef_list *list, tg_status *st);
void tg_coef_list_free(tg_coef_list *list);

#endif
