/* livefix.analysis._epochcore: three per-epoch passes of the statistics in C: the satellite counts of
 * livefix/analysis/counts.py (epoch_counts), the bucket sums of livefix/analysis/trend.py
 * (Trend.add_values) and the sky sampling of livefix/analysis/sky.py (SkyMap.on_epoch); and the
 * E/N/U projection memo of livefix/analysis/geo.py (the types EcefMemo and Projector,
 * _epochcore_geo.c) and the settled case of livefix/analysis/jumps.py (Jumps.check,
 * _epochcore_jumps.c), each with its own notes.
 *
 * Why: these are plain loops over numbers and over the epoch's satellite tuple, run every epoch;
 * the Python code stays the reference. Each function does the same operations in the same order
 * (built with -ffp-contract=off, no fast math), creates the same objects and leaves the same state.
 *
 * Hand-over instead of error mirroring: every value and container is checked before anything is
 * changed. Exact int (|v| <= 2**53), exact float, None and exact str are taken; for anything else
 * (another type, a value the Python code would raise on, a container of another shape, a bucket
 * merge) the function returns None / False having changed nothing, and the caller runs the Python
 * code, so odd inputs take exactly the reference's path, exceptions and partial states included.
 * SkyMap's count of satellites seen may be done before such a hand-over: the Python code then finds
 * the satellite tuple counted and skips it, as after its own count.
 * tests/analysis/test_epochcore_native.py compares the two step by step.
 *
 * The module's files: this one (the module and the configure_* functions), _epochcore_counts.c,
 * _epochcore_trend.c and _epochcore_sky.c (one pass each), _epochcore_geo.c (the projection memo
 * and configure_geo), _epochcore_jumps.c (jumps_settled and configure_jumps) and their private
 * header _epochcore.h
 * (the value checks the passes share). _epochcore_site.c (integrity_epoch) and
 * _epochcore_median.c (median_epoch) are the steps of the site record's stages, with their configure_*,
 * and _epochcore_bind.c binds them to their stage (bind_step).
 */
#include "_epochcore.h"

#define API 1

static const char *SAT_FIELDS[S_COUNT] = {"system", "prn", "elev", "azim", "cn0", "used"};
static const char *EPOCH_FIELDS[E_COUNT] = {"mono", "quality", "sats", "used_prns"};

/* module state (see _epochcore.h) */
PyTypeObject *ep_sat_type, *ep_epoch_type;
Py_ssize_t ep_sat_off[S_COUNT], ep_epoch_off[E_COUNT];
PyObject *ep_all_key;
Py_ssize_t ep_bucket_len;
long ep_sky_row[91], ep_sky_col[360];
double ep_sample_s;
long long ep_min_tracked, ep_max_seen;
int ep_sky_ready;
PyObject *ep_s_t0, *ep_s_t0_iso, *ep_s_width, *ep_s_max_points, *ep_s_buckets, *ep_s_origin;
PyObject *ep_s_seen_of, *ep_s_seen, *ep_s_seen_overflow, *ep_s_t, *ep_s_tracked, *ep_s_untracked, *ep_s_cn0;

/* ---- configure ---- */

static int offsets(PyObject *type, const char **names, int n, Py_ssize_t *off)
{
    return kit_slot_offsets(type, names, n, off, "%s is not a slot of %R");
}

static int set_types(PyObject *sat, PyObject *epoch)
{
    Py_ssize_t so[S_COUNT], eo[E_COUNT];
    if (offsets(sat, SAT_FIELDS, S_COUNT, so) < 0 || offsets(epoch, EPOCH_FIELDS, E_COUNT, eo) < 0)
        return -1;
    memcpy(ep_sat_off, so, sizeof so);
    memcpy(ep_epoch_off, eo, sizeof eo);
    Py_XSETREF(ep_sat_type, (PyTypeObject *)Py_NewRef(sat));
    Py_XSETREF(ep_epoch_type, (PyTypeObject *)Py_NewRef(epoch));
    return 0;
}

static PyObject *configure_counts(PyObject *Py_UNUSED(mod), PyObject *args)
{
    PyObject *sat, *epoch, *all;
    if (!PyArg_ParseTuple(args, "O!O!U", &PyType_Type, &sat, &PyType_Type, &epoch, &all) || set_types(sat, epoch) < 0)
        return NULL;
    Py_XSETREF(ep_all_key, Py_NewRef(all));
    Py_RETURN_NONE;
}

static PyObject *configure_trend(PyObject *Py_UNUSED(mod), PyObject *args)
{
    Py_ssize_t n;
    if (!PyArg_ParseTuple(args, "n", &n))
        return NULL;
    if (n != 14) { /* [n, Σt, then (sum, n) per field] of six fields: the slots written below */
        PyErr_SetString(PyExc_ValueError, "a bucket of another length");
        return NULL;
    }
    ep_bucket_len = n;
    Py_RETURN_NONE;
}

static int table(PyObject *seq, long *out, Py_ssize_t n)
{
    if (!PyList_CheckExact(seq) || PyList_GET_SIZE(seq) != n) {
        PyErr_Format(PyExc_ValueError, "a table of %zd ints expected", n);
        return -1;
    }
    for (Py_ssize_t k = 0; k < n; k++) {
        PyObject *x = PyList_GET_ITEM(seq, k);
        long v = PyLong_CheckExact(x) ? PyLong_AsLong(x) : -1;
        if (v < 0 || v > 100000) {
            PyErr_Clear();
            PyErr_SetString(PyExc_ValueError, "table entries must be small non-negative ints");
            return -1;
        }
        out[k] = v;
    }
    return 0;
}

static PyObject *configure_sky(PyObject *Py_UNUSED(mod), PyObject *args)
{
    PyObject *sat, *epoch, *row, *col;
    double s;
    long long mt, ms;
    long r[91], c[360];
    if (!PyArg_ParseTuple(args, "O!O!OOdLL", &PyType_Type, &sat, &PyType_Type, &epoch, &row, &col, &s, &mt, &ms)
        || table(row, r, 91) < 0 || table(col, c, 360) < 0 || set_types(sat, epoch) < 0)
        return NULL;
    memcpy(ep_sky_row, r, sizeof r);
    memcpy(ep_sky_col, c, sizeof c);
    ep_sample_s = s;
    ep_min_tracked = mt;
    ep_max_seen = ms;
    ep_sky_ready = 1;
    Py_RETURN_NONE;
}

int ep_ready(int part)
{
    if (!part)
        PyErr_SetString(PyExc_RuntimeError, "livefix.analysis._epochcore: not configured");
    return part;
}

/* ---- module ---- */

PyDoc_STRVAR(counts_doc,
"counts(ep) -> dict | None\n\n"
"livefix.analysis.counts.epoch_counts(ep), or None when ep holds values left to the Python code.");

PyDoc_STRVAR(trend_add_doc,
"trend_add(trend, mono, wall_iso, h_err_m, cn0_mean, sats_used, lat, lon, h) -> bool\n\n"
"Trend.add_values in place; False (nothing changed) when the Python code must do it: odd types or\n"
"values, containers of another shape, or a bucket merge.");

PyDoc_STRVAR(sky_epoch_doc,
"sky_epoch(sky, ep, suspend) -> bool\n\n"
"SkyMap.on_epoch in place; False when the Python code must go on (nothing changed but, perhaps,\n"
"the count of satellites seen, which it then finds done).");

static PyMethodDef methods[] = {
    {"configure_counts", configure_counts, METH_VARARGS,
     "configure_counts(sat_type, epoch_type, all_key): the types and key of livefix.analysis.counts."},
    {"configure_trend", configure_trend, METH_VARARGS,
     "configure_trend(bucket_len): the bucket shape of livefix.analysis.trend."},
    {"configure_sky", configure_sky, METH_VARARGS,
     "configure_sky(sat_type, epoch_type, row, col, sample_s, min_tracked, max_seen): the types, grid tables\n"
     "and constants of livefix.analysis.sky."},
    {"configure_geo", ep_configure_geo, METH_VARARGS,
     "configure_geo(geodetic_to_ecef, frame_at, a, e2): the conversion of livefix.geodesy (for odd values),\n"
     "the frame maker of livefix.analysis.geo and the WGS 84 constants A and E2."},
    {"configure_jumps", ep_configure_jumps, METH_VARARGS,
     "configure_jumps(centre_type, warmup, ew_a, hypot): the centre type and constants of livefix.analysis.jumps\n"
     "and math.hypot."},
    {"configure_position", ep_configure_position, METH_VARARGS,
     "configure_position((stats, timeline, epoch, motion, convergence, track, moments, projector), deque,\n"
     "jumps_check, fix_names, none_fix, nan, hypot, head_cap, flush_at, track_batch, settle, confirm): the types\n"
     "and constants of livefix.analysis.position and of the stages it calls."},
    {"position_epoch", (PyCFunction)(void (*)(void))ep_position_epoch, METH_FASTCALL,
     "position_epoch(stats, ep) -> bool\n\nPositionStats.on_epoch for the common case, in place; False (nothing\n"
     "changed) when the Python code must run it."},
    {"configure_fix", ep_configure_fix, METH_VARARGS,
     "configure_fix(stats_type, epoch_type, timeline_type, book_type, recent_type, deque_type, config_type,\n"
     "fix_names, none, position_sentences, not_fix_state, hypot, back_s, gap_factor, dt_n, ew_min, ew_a):\n"
     "the types and constants of livefix.analysis.fixes."},
    {"fix_step", (PyCFunction)(void (*)(void))ep_fix_step, METH_FASTCALL,
     "fix_step(stats, ep) -> bool\n\nFixStats.on_epoch for an epoch of a running session, in place; False (nothing\n"
     "changed) when the Python code must do it."},
    {"configure_integrity", ep_configure_integrity, METH_VARARGS,
     "configure_integrity(stats_type, epoch_type, deque_type, window, gap_factor): the types and constants of\n"
     "livefix.analysis.integrity."},
    {"integrity_epoch", (PyCFunction)(void (*)(void))ep_integrity_epoch, METH_FASTCALL,
     "integrity_epoch(stats, ep) -> bool\n\nStreamIntegrity.on_epoch for an epoch of a running session, in place;\n"
     "False (nothing changed) when the Python code must do it."},
    {"configure_median", ep_configure_median, METH_VARARGS,
     "configure_median(median_type, fix_medians_type, binned_type, epoch_type, fix_names, none, batch, max_bins):\n"
     "the types and constants of livefix.analysis.median."},
    {"median_epoch", (PyCFunction)(void (*)(void))ep_median_epoch, METH_FASTCALL,
     "median_epoch(median, ep) -> bool\n\nMedianPosition.on_epoch (with the batch settle) in place; False (nothing\n"
     "changed) when the Python code must do it."},
    {"configure_track", ep_configure_track, METH_VARARGS,
     "configure_track(track, moments3, log_histogram, block_means, pair_history, ring, hypot, warmup, flush, step):\n"
     "the types and constants of livefix.analysis.track and livefix.analysis.streaming."},
    {"track_settle", ep_track_settle_py, METH_O,
     "track_settle(track) -> bool\n\nTrack._settle in place; False (nothing changed) when the Python code must do it."},
    {"configure_arcs", ep_configure_arcs, METH_VARARGS,
     "configure_arcs(collector, track, config, epoch, satobs, array, append, wavelength, max_samples, edge_deg):\n"
     "the types, functions and constants of livefix.analysis.arcs."},
    {"arc_sample", (PyCFunction)(void (*)(void))ep_arc_sample, METH_FASTCALL,
     "arc_sample(collector, ep) -> bool | None\n\nArcCollector.on_epoch in place; None (nothing changed) when the\n"
     "Python code must do it."},
    {"bind_step", ep_bind_step, METH_VARARGS,
     "bind_step(kind, stage, reference) -> callable\n\nkind 'integrity' or 'median': on_epoch(ep) for the\n"
     "stage, running its C step and, when the step hands back, reference(stage, ep)."},
    {"site_counts", ep_site_counts, METH_NOARGS,
     "site_counts() -> {kind: (done, handed back)}: the epochs of the bound steps (for the tests)."},
    {"counts", ep_counts, METH_O, counts_doc},
    {"jumps_settled", (PyCFunction)(void (*)(void))ep_jumps_settled, METH_FASTCALL,
     "jumps_settled(jumps, fix, e, n, u) -> bool\n\nJumps.check for a settled epoch, in place; False (nothing changed)\n"
     "when the Python code must do the check."},
    {"trend_add", (PyCFunction)(void (*)(void))ep_trend_add, METH_FASTCALL, trend_add_doc},
    {"sky_epoch", (PyCFunction)(void (*)(void))ep_sky_epoch, METH_FASTCALL, sky_epoch_doc},
    {NULL, NULL, 0, NULL},
};

static struct PyModuleDef moduledef = {
    PyModuleDef_HEAD_INIT, "livefix.analysis._epochcore",
    "C twin of three per-epoch passes of livefix.analysis (counts, trend, sky), of its projection memo (geo)\n"
    "and of the settled case of its jump check (jumps);\n"
    "the Python code is the reference.",
    -1, methods, NULL, NULL, NULL, NULL,
};

PyMODINIT_FUNC PyInit__epochcore(void)
{
    struct { PyObject **var; const char *name; } names[] = {
        {&ep_s_t0, "t0"}, {&ep_s_t0_iso, "t0_iso"}, {&ep_s_width, "width"}, {&ep_s_max_points, "max_points"},
        {&ep_s_buckets, "buckets"}, {&ep_s_origin, "origin"}, {&ep_s_seen_of, "_seen_of"}, {&ep_s_seen, "seen"},
        {&ep_s_seen_overflow, "seen_overflow"}, {&ep_s_t, "_t"}, {&ep_s_tracked, "tracked"},
        {&ep_s_untracked, "untracked"}, {&ep_s_cn0, "cn0"},
    };
    for (size_t k = 0; k < sizeof names / sizeof names[0]; k++)
        if (*names[k].var == NULL && (*names[k].var = PyUnicode_InternFromString(names[k].name)) == NULL)
            return NULL;
    PyObject *m = PyModule_Create(&moduledef);
    if (m != NULL && (PyModule_AddIntConstant(m, "API", API) < 0 || ep_geo_add_types(m) < 0))
        Py_CLEAR(m);
    return m;
}
