/* livefix.analysis._epochcore: the satellite counts of livefix/analysis/counts.py (epoch_counts) as
 * counts(); the module and its state are in _epochcore.c.
 */
#include "_epochcore.h"

/* ---- counts.epoch_counts ---- */

struct row {
    PyObject *system; /* borrowed from a key held by one of the sets */
    Py_ssize_t n[3];
};

PyObject *ep_counts(PyObject *Py_UNUSED(mod), PyObject *ep)
{
    if (!ep_ready(ep_all_key != NULL))
        return NULL;
    if (Py_TYPE(ep) != ep_epoch_type)
        Py_RETURN_NONE;
    PyObject *sats = slot(ep, ep_epoch_off[E_SATS]), *prns = slot(ep, ep_epoch_off[E_USED_PRNS]);
    if (sats == NULL || prns == NULL || !PyTuple_CheckExact(sats) || !PyTuple_CheckExact(prns))
        Py_RETURN_NONE;
    Py_ssize_t n = PyTuple_GET_SIZE(sats);
    for (Py_ssize_t i = 0; i < PyTuple_GET_SIZE(prns); i++) {
        PyObject *k = PyTuple_GET_ITEM(prns, i);
        if (!PyTuple_CheckExact(k) || PyTuple_GET_SIZE(k) != 2 || !key_ok(PyTuple_GET_ITEM(k, 0), PyTuple_GET_ITEM(k, 1)))
            Py_RETURN_NONE;
    }
    for (Py_ssize_t i = 0; i < n; i++) {
        PyObject *s = PyTuple_GET_ITEM(sats, i), *u;
        if (Py_TYPE(s) != ep_sat_type || !key_ok(slot(s, ep_sat_off[S_SYSTEM]), slot(s, ep_sat_off[S_PRN]))
            || slot(s, ep_sat_off[S_CN0]) == NULL || (u = slot(s, ep_sat_off[S_USED])) == NULL)
            Py_RETURN_NONE;
        if (!(u == Py_None || PyBool_Check(u) || PyLong_CheckExact(u) || PyFloat_CheckExact(u)))
            Py_RETURN_NONE; /* `if s.used` of these runs no Python code */
    }
    /* the three sets as the Python code builds them: their iteration order is the order of the rows */
    PyObject *sets[3] = {PySet_New(NULL), PySet_New(NULL), PySet_New(prns)}, *out = NULL;
    struct row *rows = NULL;
    if (sets[0] == NULL || sets[1] == NULL || sets[2] == NULL)
        goto done;
    for (Py_ssize_t i = 0; i < n; i++) {
        PyObject *s = PyTuple_GET_ITEM(sats, i);
        PyObject *k = PyTuple_Pack(2, slot(s, ep_sat_off[S_SYSTEM]), slot(s, ep_sat_off[S_PRN]));
        if (k == NULL)
            goto done;
        int r = PySet_Add(sets[0], k);
        if (r == 0 && slot(s, ep_sat_off[S_CN0]) != Py_None)
            r = PySet_Add(sets[1], k);
        if (r == 0 && PyObject_IsTrue(slot(s, ep_sat_off[S_USED])))
            r = PySet_Add(sets[2], k);
        Py_DECREF(k);
        if (r < 0)
            goto done;
    }
    Py_ssize_t nrows = 0, cap = PySet_GET_SIZE(sets[0]) + PySet_GET_SIZE(sets[2]) + 1;
    rows = PyMem_Calloc((size_t)cap, sizeof *rows);
    if (rows == NULL) {
        PyErr_NoMemory();
        goto done;
    }
    for (int g = 0; g < 3; g++) {
        PyObject *it = PyObject_GetIter(sets[g]), *k;
        if (it == NULL)
            goto done;
        while ((k = PyIter_Next(it)) != NULL) {
            PyObject *system = PyTuple_GET_ITEM(k, 0);
            Py_ssize_t j = 0;
            while (j < nrows && rows[j].system != system && PyUnicode_Compare(rows[j].system, system) != 0)
                j++;
            if (j == nrows && nrows < cap)
                rows[nrows++].system = system;
            if (j < nrows)
                rows[j].n[g]++;
            Py_DECREF(k);
        }
        Py_DECREF(it);
        if (PyErr_Occurred())
            goto done;
    }
    out = PyDict_New();
    for (Py_ssize_t j = 0; out != NULL && j <= nrows; j++) {
        PyObject *v = j < nrows ? Py_BuildValue("(nnn)", rows[j].n[0], rows[j].n[1], rows[j].n[2])
                                : Py_BuildValue("(nnn)", PySet_GET_SIZE(sets[0]), PySet_GET_SIZE(sets[1]),
                                                PySet_GET_SIZE(sets[2]));
        if (v == NULL || PyDict_SetItem(out, j < nrows ? rows[j].system : ep_all_key, v) < 0)
            Py_CLEAR(out);
        Py_XDECREF(v);
    }
done:
    PyMem_Free(rows);
    for (int g = 0; g < 3; g++)
        Py_XDECREF(sets[g]);
    return out;
}
