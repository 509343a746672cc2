/* livefix.analysis._epochcore: the sky sampling of livefix/analysis/sky.py (SkyMap.on_epoch) as
 * sky_epoch(); the module and its state are in _epochcore.c.
 */
#include "_epochcore.h"

/* ---- SkyMap.on_epoch ---- */

/* SkyMap._count_seen in C: 1 done, 0 left to the Python code (nothing changed), -1 error. */
static int count_seen(PyObject *self, PyObject *sats)
{
    PyObject *seen = attr(self, ep_s_seen), *ovf = attr(self, ep_s_seen_overflow);
    long long over = 0, over0;
    int r = 0;
    if (seen == NULL || ovf == NULL || !PySet_CheckExact(seen) || !count_of(ovf, &over))
        goto done;
    over0 = over;
    for (Py_ssize_t i = 0; i < PyTuple_GET_SIZE(sats); i++) {
        PyObject *s = PyTuple_GET_ITEM(sats, i);
        if (!key_ok(slot(s, ep_sat_off[S_SYSTEM]), slot(s, ep_sat_off[S_PRN])))
            goto done;
    }
    r = -1;
    if (PyObject_SetAttr(self, ep_s_seen_of, sats) < 0)
        goto done;
    for (Py_ssize_t i = 0; i < PyTuple_GET_SIZE(sats); i++) {
        PyObject *s = PyTuple_GET_ITEM(sats, i);
        PyObject *k = PyTuple_Pack(2, slot(s, ep_sat_off[S_SYSTEM]), slot(s, ep_sat_off[S_PRN]));
        int c = k == NULL ? -1 : PySet_Contains(seen, k);
        if (c == 0) {
            if (PySet_GET_SIZE(seen) < ep_max_seen)
                c = PySet_Add(seen, k);
            else
                over++;
        }
        Py_XDECREF(k);
        if (c < 0)
            goto done;
    }
    if (over != over0) {
        PyObject *x = PyLong_FromLongLong(over);
        int e = x == NULL ? -1 : PyObject_SetAttr(self, ep_s_seen_overflow, x);
        Py_XDECREF(x);
        if (e < 0)
            goto done;
    }
    r = 1;
done:
    Py_XDECREF(seen);
    Py_XDECREF(ovf);
    return r;
}

struct sample { /* one per satellite: the signal of highest C/N0 */
    PyObject *system;
    long long prn, el;
    PyObject *az;
    double c; /* 0: untracked (the int 0 in Python) */
    Py_ssize_t cell;
};

/* The grid index of a sample, or -1 when int(az) would raise or is not taken here. */
static Py_ssize_t cell_of(const struct sample *e)
{
    long long ai;
    if (PyLong_CheckExact(e->az)) {
        int over = 0;
        ai = PyLong_AsLongLongAndOverflow(e->az, &over) % 360;
        if (over)
            return -1;
    }
    else if (PyFloat_CheckExact(e->az) && isfinite(PyFloat_AS_DOUBLE(e->az)))
        ai = (long long)fmod(trunc(PyFloat_AS_DOUBLE(e->az)), 360.0); /* int(az) % 360, exactly */
    else
        return -1;
    if (ai < 0)
        ai += 360;
    return (Py_ssize_t)(ep_sky_row[e->el] + ep_sky_col[ai]);
}

/* The sampling pass over sats (checked SatObs): 1 done, 0 left to the Python code, -1 error. */
static int sample_sky(PyObject *self, PyObject *sats, PyObject *mono)
{
    Py_ssize_t n = PyTuple_GET_SIZE(sats), np = 0, cap = 8, tracked = 0;
    while (cap < 2 * n)
        cap *= 2;
    struct sample *per = PyMem_Malloc((size_t)(n + 1) * sizeof *per);
    Py_ssize_t *tab = PyMem_Malloc((size_t)cap * sizeof *tab);
    PyObject *ls[3] = {NULL, NULL, NULL}; /* tracked, untracked, cn0 */
    int r = 0;
    if (per == NULL || tab == NULL) {
        PyErr_NoMemory();
        r = -1;
        goto done;
    }
    for (Py_ssize_t j = 0; j < cap; j++)
        tab[j] = -1;
    for (Py_ssize_t i = 0; i < n; i++) {
        PyObject *s = PyTuple_GET_ITEM(sats, i), *el = slot(s, ep_sat_off[S_ELEV]), *az = slot(s, ep_sat_off[S_AZIM]);
        PyObject *cn0 = slot(s, ep_sat_off[S_CN0]), *system = slot(s, ep_sat_off[S_SYSTEM]);
        long long e;
        double c = 0.0;
        if (el == Py_None || az == Py_None)
            continue;
        if (PyLong_CheckExact(el)) {
            int over = 0;
            e = PyLong_AsLongLongAndOverflow(el, &over);
            if (over || e < 0 || e > 90)
                continue;
        }
        else if (PyFloat_CheckExact(el)) {
            double d = PyFloat_AS_DOUBLE(el);
            if (0 <= d && d <= 90)
                goto done; /* a float grid index: the Python code raises (or not) itself */
            continue;
        }
        else
            goto done;
        if (cn0 != Py_None) {
            if (!num_of(cn0, &c))
                goto done;
            if (!(c > 0)) /* `not (c and c > 0)`: 0, negative and nan become 0 */
                c = 0.0;
        }
        int over = 0;
        long long prn = PyLong_CheckExact(slot(s, ep_sat_off[S_PRN])) ?
            PyLong_AsLongLongAndOverflow(slot(s, ep_sat_off[S_PRN]), &over) : 0;
        if (!PyUnicode_CheckExact(system) || !PyLong_CheckExact(slot(s, ep_sat_off[S_PRN])) || over)
            goto done;
        Py_hash_t hh = PyObject_Hash(system); /* a str: cached, no Python code */
        size_t j = ((size_t)hh ^ ((size_t)prn * 1000003u)) & (size_t)(cap - 1);
        while (tab[j] >= 0 && !(per[tab[j]].prn == prn && (per[tab[j]].system == system
                                                             || PyUnicode_Compare(per[tab[j]].system, system) == 0)))
            j = (j + 1) & (size_t)(cap - 1);
        struct sample *old = tab[j] >= 0 ? &per[tab[j]] : NULL;
        if (old == NULL) {
            tab[j] = np;
            old = &per[np++];
            old->system = system;
            old->prn = prn;
            old->c = -1.0;
        }
        if (c > old->c) { /* a new key (c > -1) or a stronger signal of the satellite */
            old->el = e;
            old->az = az;
            old->c = c;
        }
    }
    for (Py_ssize_t k = 0; k < np; k++)
        tracked += per[k].c != 0.0;
    if (tracked >= ep_min_tracked) { /* check every cell before changing anything */
        PyObject *names[3] = {ep_s_tracked, ep_s_untracked, ep_s_cn0};
        for (int k = 0; k < 3; k++)
            if ((ls[k] = attr(self, names[k])) == NULL || !PyList_CheckExact(ls[k]))
                goto done;
        for (Py_ssize_t k = 0; k < np; k++) {
            Py_ssize_t i = per[k].cell = cell_of(&per[k]);
            long long x;
            if (i < 0)
                goto done;
            if (per[k].c != 0.0) {
                if (i >= PyList_GET_SIZE(ls[0]) || i >= PyList_GET_SIZE(ls[2]) || !count_of(PyList_GET_ITEM(ls[0], i), &x)
                    || !PyFloat_CheckExact(PyList_GET_ITEM(ls[2], i)))
                    goto done;
            }
            else if (i >= PyList_GET_SIZE(ls[1]) || !count_of(PyList_GET_ITEM(ls[1], i), &x))
                goto done;
        }
    }
    r = -1;
    if (PyObject_SetAttr(self, ep_s_t, mono) < 0)
        goto done;
    if (tracked >= ep_min_tracked)
        for (Py_ssize_t k = 0; k < np; k++) {
            Py_ssize_t i = per[k].cell;
            if (per[k].c != 0.0 ? add_one(ls[0], i) < 0 || add_float(ls[2], i, per[k].c) < 0 : add_one(ls[1], i) < 0)
                goto done;
        }
    r = 1;
done:
    PyMem_Free(per);
    PyMem_Free(tab);
    for (int k = 0; k < 3; k++)
        Py_XDECREF(ls[k]);
    return r;
}

PyObject *ep_sky_epoch(PyObject *Py_UNUSED(mod), PyObject *const *a, Py_ssize_t nargs)
{
    if (!ep_ready(ep_sky_ready))
        return NULL;
    if (nargs != 3) {
        PyErr_SetString(PyExc_TypeError, "sky_epoch takes 3 arguments");
        return NULL;
    }
    PyObject *self = a[0], *ep = a[1], *suspend = a[2], *seen_of, *t;
    if (Py_TYPE(ep) != ep_epoch_type || !PyBool_Check(suspend))
        Py_RETURN_FALSE;
    PyObject *sats = slot(ep, ep_epoch_off[E_SATS]), *mono = slot(ep, ep_epoch_off[E_MONO]);
    PyObject *quality = slot(ep, ep_epoch_off[E_QUALITY]);
    if (sats == NULL || mono == NULL || quality == NULL || !PyTuple_CheckExact(sats))
        Py_RETURN_FALSE;
    for (Py_ssize_t i = 0; i < PyTuple_GET_SIZE(sats); i++) {
        PyObject *s = PyTuple_GET_ITEM(sats, i);
        if (Py_TYPE(s) != ep_sat_type)
            Py_RETURN_FALSE;
        for (int f = 0; f < S_COUNT; f++)
            if (slot(s, ep_sat_off[f]) == NULL)
                Py_RETURN_FALSE;
    }
    if ((seen_of = attr(self, ep_s_seen_of)) == NULL)
        Py_RETURN_FALSE;
    int r = seen_of == sats ? 1 : count_seen(self, sats);
    Py_DECREF(seen_of);
    if (r <= 0)
        return r < 0 ? NULL : Py_NewRef(Py_False);
    long long q;
    if (!PyFloat_CheckExact(mono) || !count_of(quality, &q) || (t = attr(self, ep_s_t)) == NULL)
        Py_RETURN_FALSE;
    double dt = PyFloat_AS_DOUBLE(mono) - (PyFloat_CheckExact(t) ? PyFloat_AS_DOUBLE(t) : NAN);
    int t_ok = PyFloat_CheckExact(t);
    Py_DECREF(t);
    if (!t_ok)
        Py_RETURN_FALSE;
    if (suspend == Py_True || q <= 0 || (0 <= dt && dt < ep_sample_s))
        Py_RETURN_TRUE;
    r = sample_sky(self, sats, mono);
    return r < 0 ? NULL : Py_NewRef(r ? Py_True : Py_False);
}
