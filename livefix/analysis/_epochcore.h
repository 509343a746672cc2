/* livefix.analysis._epochcore: the declarations its source files share (private to the module).
 *
 * The module is built from _epochcore.c (the module and the configure_* functions: the types,
 * tables and constants), _epochcore_counts.c (counts()), _epochcore_trend.c (trend_add()),
 * _epochcore_sky.c (sky_epoch()), _epochcore_geo.c (the types EcefMemo and Projector, and
 * configure_geo()) and _epochcore_jumps.c (jumps_settled() and configure_jumps()). The value checks and list updates the passes share are static
 * inline here; everything else shared has the ep_ prefix and hidden visibility, so the extension
 * exports nothing but its init function.
 */
#ifndef LIVEFIX_EPOCHCORE_H
#define LIVEFIX_EPOCHCORE_H

#define PY_SSIZE_T_CLEAN
#include <Python.h>
#include <math.h>

#include "../_corekit.h"

#if defined(__GNUC__) && !defined(_WIN32)
#define EP_HIDDEN __attribute__((visibility("hidden")))
#else
#define EP_HIDDEN
#endif

#define COUNT_MAX (1LL << 62)            /* counters kept in C stay far from overflow */

enum { S_SYSTEM, S_PRN, S_ELEV, S_AZIM, S_CN0, S_USED, S_COUNT };
enum { E_MONO, E_QUALITY, E_SATS, E_USED_PRNS, E_COUNT };

/* module state, set by the configure_* functions of _epochcore.c (the types and constants of the
 * Python modules) */
EP_HIDDEN extern PyTypeObject *ep_sat_type, *ep_epoch_type;
EP_HIDDEN extern Py_ssize_t ep_sat_off[S_COUNT], ep_epoch_off[E_COUNT];
EP_HIDDEN extern PyObject *ep_all_key;                  /* counts.ALL */
EP_HIDDEN extern Py_ssize_t ep_bucket_len;              /* trend._BUCKET_LEN, 0 = not configured */
EP_HIDDEN extern long ep_sky_row[91], ep_sky_col[360];  /* sky._ROW, sky._COL */
EP_HIDDEN extern double ep_sample_s;                    /* sky.SAMPLE_S */
EP_HIDDEN extern long long ep_min_tracked, ep_max_seen; /* sky.MIN_TRACKED, sky.MAX_SEEN */
EP_HIDDEN extern int ep_sky_ready;
/* attribute names (interned once, by the module init) */
EP_HIDDEN extern PyObject *ep_s_t0, *ep_s_t0_iso, *ep_s_width, *ep_s_max_points, *ep_s_buckets, *ep_s_origin;
EP_HIDDEN extern PyObject *ep_s_seen_of, *ep_s_seen, *ep_s_seen_overflow, *ep_s_t, *ep_s_tracked, *ep_s_untracked,
    *ep_s_cn0;

EP_HIDDEN int ep_ready(int part); /* part, or 0 with RuntimeError when that part was not configured */

/* the passes: _epochcore_counts.c, _epochcore_trend.c, _epochcore_sky.c */
EP_HIDDEN PyObject *ep_counts(PyObject *mod, PyObject *ep);
EP_HIDDEN PyObject *ep_trend_add(PyObject *mod, PyObject *const *a, Py_ssize_t nargs);
EP_HIDDEN PyObject *ep_sky_epoch(PyObject *mod, PyObject *const *a, Py_ssize_t nargs);

/* the projection memo: _epochcore_geo.c (its configuration lives there too) */
EP_HIDDEN PyObject *ep_configure_geo(PyObject *mod, PyObject *args);
EP_HIDDEN int ep_geo_add_types(PyObject *m); /* the types EcefMemo and Projector: 0, or -1 with an error */

/* the settled case of Jumps.check: _epochcore_jumps.c (its configuration lives there too) */
EP_HIDDEN PyObject *ep_configure_jumps(PyObject *mod, PyObject *args);
EP_HIDDEN PyObject *ep_jumps_settled(PyObject *mod, PyObject *const *a, Py_ssize_t nargs);

/* the common case of PositionStats.on_epoch: _epochcore_pos.c (its configuration lives there too) */
EP_HIDDEN PyObject *ep_configure_position(PyObject *mod, PyObject *args);
EP_HIDDEN PyObject *ep_position_epoch(PyObject *mod, PyObject *const *a, Py_ssize_t nargs);

/* the running-session case of FixStats.on_epoch: _epochcore_fix.c (its configuration lives there too) and
 * _epochcore_fixplan.c, with their private header _epochcore_fix.h */
EP_HIDDEN PyObject *ep_configure_fix(PyObject *mod, PyObject *args);
EP_HIDDEN PyObject *ep_fix_step(PyObject *mod, PyObject *const *a, Py_ssize_t nargs);

/* the running-session case of StreamIntegrity.on_epoch: _epochcore_site.c, and
 * MedianPosition.on_epoch with its batch settle: _epochcore_median.c (their configurations live there too) */
EP_HIDDEN PyObject *ep_configure_integrity(PyObject *mod, PyObject *args);
EP_HIDDEN PyObject *ep_integrity_epoch(PyObject *mod, PyObject *const *a, Py_ssize_t nargs);
EP_HIDDEN PyObject *ep_configure_median(PyObject *mod, PyObject *args);
EP_HIDDEN PyObject *ep_median_epoch(PyObject *mod, PyObject *const *a, Py_ssize_t nargs);
/* Track._settle: _epochcore_track.c (its configuration lives there too); ep_track_settle gives 1 done,
 * 0 handed back with nothing changed, -1 with an error set */
EP_HIDDEN PyObject *ep_configure_track(PyObject *mod, PyObject *args);
EP_HIDDEN PyObject *ep_track_settle_py(PyObject *mod, PyObject *trk);
EP_HIDDEN int ep_track_settle(PyObject *trk);
/* ArcCollector.on_epoch: _epochcore_arcs.c (its configuration lives there too) */
EP_HIDDEN PyObject *ep_configure_arcs(PyObject *mod, PyObject *args);
EP_HIDDEN PyObject *ep_arc_sample(PyObject *mod, PyObject *const *a, Py_ssize_t nargs);
/* those two bound to their stage as its on_epoch, and their counts: _epochcore_bind.c */
EP_HIDDEN PyObject *ep_bind_step(PyObject *mod, PyObject *args);
EP_HIDDEN PyObject *ep_site_counts(PyObject *mod, PyObject *args);

/* ---- values ---- */

/* An exact int in [-COUNT_MAX, COUNT_MAX]: 1 and its value, else 0. */
static inline int count_of(PyObject *v, long long *out)
{
    return kit_count_in(v, -COUNT_MAX, COUNT_MAX, out);
}

static inline PyObject *slot(PyObject *o, Py_ssize_t off)
{
    return *(PyObject **)((char *)o + off);
}

/* A (system, prn) key of exact str and exact int. */
static inline int key_ok(PyObject *system, PyObject *prn)
{
    return system != NULL && prn != NULL && PyUnicode_CheckExact(system) && PyLong_CheckExact(prn);
}

/* An attribute (new reference), or NULL with no error set: the Python code then meets it itself. */
static inline PyObject *attr(PyObject *o, PyObject *name)
{
    PyObject *v = PyObject_GetAttr(o, name);
    if (v == NULL)
        PyErr_Clear();
    return v;
}

#endif
