/* geometry.c - picks the geometry implementation the config asks for. */
#include "geometry.h"

tg_geometry *tg_geometry_create(const tg_config *cfg, tg_status *st)
{
    switch (cfg->geometry) {
    case TG_GEOM_BASIN:
        return tg_geom_basin_create(cfg, st);
    case TG_GEOM_PERIODIC:
        return tg_geom_periodic_create(cfg, st);
    }
    tg_fail(st, TG_ERR_CONFIG, "[grid] geometry: unknown kind %d", (int)cfg->geometry);
    return NULL;
}

void tg_geometry_destroy(tg_geometry *g)
{
    if (g && g->ops)
        g->ops->destroy(g);
}
