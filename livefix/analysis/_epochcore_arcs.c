/* livefix.analysis._epochcore: ArcCollector.on_epoch (livefix/analysis/arcs.py) as arc_sample(), and
 * configure_arcs.
 *
 * Why: about once a second of stream time the collector takes every satellite signal of the epoch as
 * a sample of its arc in progress: a window test, a dict lookup by (system, prn, signal) and four
 * appends to typed arrays. In Python that is about 0.8 us a satellite, some 7 % of a one-process
 * report of a 10 Hz four-constellation file. Here the same tests run on the same values in the same
 * order, the same objects are stored (the epoch's own mono, the values as float() gives them), and
 * everything that leaves the fast path (a new arc's wavelength, closing an arc) calls the Python
 * code the reference calls (wavelength(), self._close(key), _Track()).
 *
 * Hand-over: before anything is written the whole input is read and checked: exact types
 * (configured), times and stored values that are exact floats, satellite values that are None,
 * exact floats or exact ints within 2**53 (which compare and convert exactly), tracks of exact
 * typed arrays. Anything else: arc_sample changes nothing and returns None, and the caller runs the
 * reference. tests/analysis/test_arcs_native.py and bench/fuzz_arcs.py compare the two.
 */
#include "_epochcore.h"

enum { T_T, T_EL, T_AZ, T_CN0, T_LAST, T_COUNT };
static const char *TR_F[T_COUNT] = {"t", "el", "az", "cn0", "last"};
enum { C_SAMPLE, C_LO, C_HI, C_GAP, C_COUNT };
static const char *CF_F[C_COUNT] = {"sample_s", "el_min_deg", "el_max_deg", "gap_s"};
enum { EP_MONO, EP_SATS, EP_COUNT };
static const char *EP_F[EP_COUNT] = {"mono", "sats"};
enum { V_SYSTEM, V_PRN, V_SIGNAL, V_ELEV, V_AZIM, V_CN0, V_COUNT };
static const char *SV_F[V_COUNT] = {"system", "prn", "signal", "elev", "azim", "cn0"};
enum { N_CFG, N_TRACKS, N_T, N_CLOSE, N_COUNT };
static const char *NAMES[N_COUNT] = {"cfg", "_tracks", "_t", "_close"};

static PyTypeObject *ac_coll, *ac_track, *ac_cfg, *ac_epoch, *ac_sat, *ac_array;
static PyObject *ac_append, *ac_wavelength, *ac_name[N_COUNT];
static Py_ssize_t ac_tr[T_COUNT], ac_cf[C_COUNT], ac_ep[EP_COUNT], ac_sv[V_COUNT];
static long long ac_max_samples;
static double ac_edge;

PyObject *ep_configure_arcs(PyObject *Py_UNUSED(mod), PyObject *args)
{
    PyObject *ty[6], *app, *wl;
    long long maxs;
    double edge;
    Py_ssize_t tr[T_COUNT], cf[C_COUNT], ep[EP_COUNT], sv[V_COUNT];
    const char *fmt = "%s is not a slot of %R";
    if (!PyArg_ParseTuple(args, "O!O!O!O!O!O!OOLd", &PyType_Type, &ty[0], &PyType_Type, &ty[1], &PyType_Type,
                          &ty[2], &PyType_Type, &ty[3], &PyType_Type, &ty[4], &PyType_Type, &ty[5], &app, &wl,
                          &maxs, &edge)
        || kit_slot_offsets(ty[1], TR_F, T_COUNT, tr, fmt) < 0 || kit_slot_offsets(ty[2], CF_F, C_COUNT, cf, fmt) < 0
        || kit_slot_offsets(ty[3], EP_F, EP_COUNT, ep, fmt) < 0 || kit_slot_offsets(ty[4], SV_F, V_COUNT, sv, fmt) < 0)
        return NULL;
    if (!PyCallable_Check(app) || !PyCallable_Check(wl) || maxs < 1 || maxs > COUNT_MAX || !isfinite(edge)) {
        PyErr_SetString(PyExc_ValueError, "configure_arcs: callable append and wavelength, MAX_SAMPLES >= 1, "
                                          "a finite EDGE_DEG");
        return NULL;
    }
    for (int k = 0; k < N_COUNT; k++)
        if (ac_name[k] == NULL && (ac_name[k] = PyUnicode_InternFromString(NAMES[k])) == NULL)
            return NULL;
    /* the collector keeps cfg, _tracks and _t in its instance dict: no class attribute may shadow one */
    for (int k = N_CFG; k <= N_T; k++)
        if (_PyType_Lookup((PyTypeObject *)ty[0], ac_name[k]) != NULL) {
            PyErr_Format(PyExc_TypeError, "configure_arcs: %R has a class attribute %U", ty[0], ac_name[k]);
            return NULL;
        }
    memcpy(ac_tr, tr, sizeof tr);
    memcpy(ac_cf, cf, sizeof cf);
    memcpy(ac_ep, ep, sizeof ep);
    memcpy(ac_sv, sv, sizeof sv);
    PyTypeObject **dst[6] = {&ac_coll, &ac_track, &ac_cfg, &ac_epoch, &ac_sat, &ac_array};
    for (int t = 0; t < 6; t++)
        Py_XSETREF(*dst[t], (PyTypeObject *)Py_NewRef(ty[t]));
    Py_XSETREF(ac_append, Py_NewRef(app));
    Py_XSETREF(ac_wavelength, Py_NewRef(wl));
    ac_max_samples = maxs, ac_edge = edge;
    Py_RETURN_NONE;
}

/* a satellite value: None (1, *none set), an exact float or an exact int within 2**53 (1), else 0 */
static int sat_value(PyObject *v, double *x, int *none)
{
    *none = v == Py_None;
    return *none || num_of(v, x);
}

/* a track the fast path may append to: exact type, four exact arrays, an exact float last */
static int track_ok(PyObject *tr)
{
    if (Py_TYPE(tr) != ac_track)
        return 0;
    for (int k = T_T; k <= T_CN0; k++) {
        PyObject *a = slot(tr, ac_tr[k]);
        if (a == NULL || Py_TYPE(a) != ac_array)
            return 0;
    }
    PyObject *last = slot(tr, ac_tr[T_LAST]);
    return last != NULL && PyFloat_CheckExact(last);
}

static int append(PyObject *arr, PyObject *v) /* v borrowed */
{
    PyObject *args[2] = {arr, v};
    PyObject *r = PyObject_Vectorcall(ac_append, args, 2, NULL);
    Py_XDECREF(r);
    return r == NULL ? -1 : 0;
}

/* float(v) of a checked value: v itself when an exact float (new reference) */
static PyObject *as_float(PyObject *v, double x)
{
    return PyFloat_CheckExact(v) ? Py_NewRef(v) : PyFloat_FromDouble(x);
}

static int close_arc(PyObject *coll, PyObject *key)
{
    PyObject *r = PyObject_CallMethodOneArg(coll, ac_name[N_CLOSE], key);
    Py_XDECREF(r);
    return r == NULL ? -1 : 0;
}

/* a new _Track() stored as tracks[key] (new reference), or NULL with an error */
static PyObject *new_track(PyObject *tracks, PyObject *key)
{
    PyObject *tr = PyObject_CallNoArgs((PyObject *)ac_track);
    if (tr != NULL && (PyDict_SetItem(tracks, key, tr) < 0 || !track_ok(tr))) {
        if (!PyErr_Occurred())
            PyErr_SetString(PyExc_RuntimeError, "arc_sample: _Track() gave an odd track");
        Py_CLEAR(tr);
    }
    return tr;
}

/* the samples of one satellite (the loop body of ArcCollector.on_epoch): 0, or -1 with an error */
static int take(PyObject *coll, PyObject *tracks, PyObject *s, PyObject *t, double tv, double lo, double hi,
                double gap)
{
    PyObject *el = slot(s, ac_sv[V_ELEV]), *az = slot(s, ac_sv[V_AZIM]), *c = slot(s, ac_sv[V_CN0]);
    double e = 0, a = 0, cn = 0;
    int none_e, none_a, none_c;
    sat_value(el, &e, &none_e), sat_value(az, &a, &none_a), sat_value(c, &cn, &none_c); /* checked before */
    if (none_e || none_a || none_c || cn == 0 || cn <= 0) /* el is None or az is None or not c or c <= 0 */
        return 0;
    PyObject *key = PyTuple_Pack(3, slot(s, ac_sv[V_SYSTEM]), slot(s, ac_sv[V_PRN]), slot(s, ac_sv[V_SIGNAL]));
    if (key == NULL)
        return -1;
    int rc = -1;
    PyObject *tr = PyDict_GetItemWithError(tracks, key), *v[4] = {NULL, NULL, NULL, NULL};
    if (tr == NULL && PyErr_Occurred())
        goto done;
    Py_XINCREF(tr);
    if (!(lo <= e && e <= hi)) { /* left the window: the arc is over */
        rc = tr != NULL ? close_arc(coll, key) : 0;
        goto done;
    }
    if (tr != NULL && !track_ok(tr)) { /* checked before; only Python code run since could change it */
        PyErr_SetString(PyExc_RuntimeError, "arc_sample: an arc in progress changed type meanwhile");
        goto done;
    }
    /* the values to store, made before any Python code runs (wavelength(), _close(), _Track()) */
    v[0] = Py_NewRef(t), v[1] = as_float(el, e), v[2] = as_float(az, a), v[3] = as_float(c, cn);
    if (v[1] == NULL || v[2] == NULL || v[3] == NULL)
        goto done;
    if (tr == NULL) {
        PyObject *lam = PyObject_CallFunctionObjArgs(ac_wavelength, slot(s, ac_sv[V_SYSTEM]),
                                                     slot(s, ac_sv[V_SIGNAL]), NULL);
        if (lam == NULL)
            goto done;
        int none = lam == Py_None;
        Py_DECREF(lam);
        if (none) {
            rc = 0;
            goto done;
        }
        if ((tr = new_track(tracks, key)) == NULL)
            goto done;
    } else {
        Py_ssize_t n = PyObject_Length(slot(tr, ac_tr[T_T]));
        if (n < 0)
            goto done;
        if (tv - PyFloat_AS_DOUBLE(slot(tr, ac_tr[T_LAST])) > gap || n >= ac_max_samples) {
            Py_CLEAR(tr);
            if (close_arc(coll, key) < 0 || (tr = new_track(tracks, key)) == NULL)
                goto done;
        }
    }
    for (int k = T_T; k <= T_CN0; k++)
        if (append(slot(tr, ac_tr[k]), v[k]) < 0)
            goto done;
    PyObject **last = (PyObject **)((char *)tr + ac_tr[T_LAST]);
    Py_XSETREF(*last, Py_NewRef(t));
    rc = 0;
done:
    for (int k = 0; k < 4; k++)
        Py_XDECREF(v[k]);
    Py_XDECREF(tr);
    Py_DECREF(key);
    return rc;
}

/* stale = [k for k, tr in tracks.items() if t - tr.last > gap]; self._close(k) for each */
static int close_stale(PyObject *coll, PyObject *tracks, PyObject *t, double tv, double gap)
{
    PyObject *stale = PyList_New(0), *k, *tr;
    Py_ssize_t pos = 0;
    if (stale == NULL)
        return -1;
    while (PyDict_Next(tracks, &pos, &k, &tr)) {
        PyObject *last = Py_TYPE(tr) == ac_track ? slot(tr, ac_tr[T_LAST]) : NULL;
        int old;
        if (last != NULL && PyFloat_CheckExact(last)) {
            old = tv - PyFloat_AS_DOUBLE(last) > gap;
        } else { /* only if the Python code put an odd track there meanwhile: as Python computes it */
            PyObject *l = PyObject_GetAttrString(tr, "last"), *d = l == NULL ? NULL : PyNumber_Subtract(t, l),
                     *g = d == NULL ? NULL : PyFloat_FromDouble(gap);
            old = g == NULL ? -1 : PyObject_RichCompareBool(d, g, Py_GT);
            Py_XDECREF(l), Py_XDECREF(d), Py_XDECREF(g);
        }
        if (old < 0 || (old && PyList_Append(stale, k) < 0)) {
            Py_DECREF(stale);
            return -1;
        }
    }
    for (Py_ssize_t i = 0; i < PyList_GET_SIZE(stale); i++)
        if (close_arc(coll, PyList_GET_ITEM(stale, i)) < 0) {
            Py_DECREF(stale);
            return -1;
        }
    Py_DECREF(stale);
    return 0;
}

static PyObject *handed(void) { Py_RETURN_NONE; }

/* arc_sample(collector, ep) -> True | False | None */
PyObject *ep_arc_sample(PyObject *Py_UNUSED(mod), PyObject *const *a, Py_ssize_t nargs)
{
    if (nargs != 2) {
        PyErr_SetString(PyExc_TypeError, "arc_sample(collector, epoch)");
        return NULL;
    }
    if (ac_coll == NULL) {
        PyErr_SetString(PyExc_RuntimeError, "arc_sample: configure_arcs was not called");
        return NULL;
    }
    PyObject *coll = a[0], *ep = a[1];
    if (Py_TYPE(coll) != ac_coll || Py_TYPE(ep) != ac_epoch)
        return handed();
    PyObject **dp = _PyObject_GetDictPtr(coll);
    PyObject *d = dp != NULL ? *dp : NULL;
    if (d == NULL || !PyDict_CheckExact(d))
        return handed();
    PyObject *cfg = PyDict_GetItemWithError(d, ac_name[N_CFG]), *tracks, *t0;
    if (cfg == NULL || Py_TYPE(cfg) != ac_cfg)
        return PyErr_Occurred() ? NULL : handed();
    tracks = PyDict_GetItemWithError(d, ac_name[N_TRACKS]);
    if (tracks == NULL || !PyDict_CheckExact(tracks))
        return PyErr_Occurred() ? NULL : handed();
    t0 = PyDict_GetItemWithError(d, ac_name[N_T]);
    if (t0 == NULL || !PyFloat_CheckExact(t0))
        return PyErr_Occurred() ? NULL : handed();
    double cv[C_COUNT];
    for (int k = 0; k < C_COUNT; k++) {
        PyObject *v = slot(cfg, ac_cf[k]);
        if (v == NULL || !num_of(v, &cv[k]))
            return handed();
    }
    PyObject *t = slot(ep, ac_ep[EP_MONO]), *sats = slot(ep, ac_ep[EP_SATS]);
    if (t == NULL || !PyFloat_CheckExact(t))
        return handed();
    double tv = PyFloat_AS_DOUBLE(t), dt = tv - PyFloat_AS_DOUBLE(t0);
    if (0 <= dt && dt < cv[C_SAMPLE])
        Py_RETURN_FALSE;
    if (sats == NULL || !PyTuple_CheckExact(sats))
        return handed();
    for (Py_ssize_t i = 0; i < PyTuple_GET_SIZE(sats); i++) {
        PyObject *s = PyTuple_GET_ITEM(sats, i);
        if (Py_TYPE(s) != ac_sat)
            return handed();
        double x;
        int none;
        for (int k = V_ELEV; k <= V_CN0; k++) {
            PyObject *v = slot(s, ac_sv[k]);
            if (v == NULL || !sat_value(v, &x, &none))
                return handed();
        }
        if (slot(s, ac_sv[V_SYSTEM]) == NULL || slot(s, ac_sv[V_PRN]) == NULL || slot(s, ac_sv[V_SIGNAL]) == NULL)
            return handed();
    }
    {
        PyObject *k, *tr;
        Py_ssize_t pos = 0;
        while (PyDict_Next(tracks, &pos, &k, &tr))
            if (!track_ok(tr))
                return handed();
    }
    /* checked: from here on as the reference, writes included (what is read is held: Python code runs) */
    Py_INCREF(tracks);
    Py_INCREF(sats);
    Py_INCREF(t);
    int rc = PyDict_SetItem(d, ac_name[N_T], t); /* self._t = t */
    double lo = cv[C_LO] - ac_edge, hi = cv[C_HI] + ac_edge;
    for (Py_ssize_t i = 0; rc == 0 && i < PyTuple_GET_SIZE(sats); i++)
        rc = take(coll, tracks, PyTuple_GET_ITEM(sats, i), t, tv, lo, hi, cv[C_GAP]);
    if (rc == 0)
        rc = close_stale(coll, tracks, t, tv, cv[C_GAP]);
    Py_DECREF(t);
    Py_DECREF(sats);
    Py_DECREF(tracks);
    if (rc < 0)
        return NULL;
    Py_RETURN_TRUE;
}
