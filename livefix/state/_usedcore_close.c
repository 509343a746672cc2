/* livefix.state._usedcore: close() (used.UsedTracker.close): the open lists of the epoch placed
 * against the current sky object through the placing memo (a dict, new when the sky is; a list never
 * placed against this sky goes to used.place), the used set, held while no GSA arrives for up to
 * USED_HOLD_S and handed back as the very same frozenset while it repeats, and the epoch's unknown
 * labels.
 */
#include "_usedcore.h"

static PyObject *S_UPDATE;
PyObject *used_hold;

/* ---- close(): used.UsedTracker.close ---- */

void used_open_clear(Tracker *s)
{
    Py_ssize_t n = s->nopen;
    s->nopen = 0;
    for (Py_ssize_t i = 0; i < n; i++) {
        Py_DECREF(s->open[i].talker);
        Py_DECREF(s->open[i].nums);
    }
}

void used_labels_clear(Tracker *s)
{
    int n = s->nlabels;
    s->nlabels = 0;
    for (int i = 0; i < n; i++) Py_DECREF(s->labels[i]);
}

static int update(PyObject *used, PyObject *pairs) /* used.update(pairs) */
{
    if (!PySet_CheckExact(used)) {
        PyObject *r = PyObject_CallMethodOneArg(used, S_UPDATE, pairs);
        Py_XDECREF(r);
        return r != NULL ? 0 : -1;
    }
    for (Py_ssize_t i = 0; i < PyTuple_GET_SIZE(pairs); i++) /* set.update of a tuple: add in order */
        if (PySet_Add(used, PyTuple_GET_ITEM(pairs, i)) < 0) return -1;
    return 0;
}

static int place_open(Tracker *s, PyObject *used, PyObject *in_view) /* the open lists against the sky */
{
    PyObject *view = PyObject_CallNoArgs(in_view), *memo;
    if (view == NULL) return -1;
    if (view != s->placed_for) {
        PyObject *fresh = PyDict_New();
        if (fresh == NULL) {
            Py_DECREF(view);
            return -1;
        }
        Py_SETREF(s->placed_for, Py_NewRef(view));
        Py_SETREF(s->placed, fresh);
    }
    memo = Py_NewRef(s->placed);
    int rc = -1;
    for (Py_ssize_t i = 0; i < s->nopen; i++) {
        PyObject *talker = s->open[i].talker, *nums = s->open[i].nums;
        PyObject *hit = PyDict_GetItemWithError(memo, nums);
        if (hit != NULL) {
            Py_INCREF(hit);
        } else {
            if (PyErr_Occurred() || (hit = PyObject_CallFunctionObjArgs(s->place, nums, view, NULL)) == NULL) goto done;
            if (!PyTuple_CheckExact(hit) || PyTuple_GET_SIZE(hit) != 2 || !PyTuple_CheckExact(PyTuple_GET_ITEM(hit, 0))
                || !PyTuple_CheckExact(PyTuple_GET_ITEM(hit, 1))) {
                PyErr_SetString(PyExc_TypeError, "place must return a pair of tuples");
                Py_DECREF(hit);
                goto done;
            }
            if (PyDict_SetItem(memo, nums, hit) < 0) {
                Py_DECREF(hit);
                goto done;
            }
        }
        int r = update(used, PyTuple_GET_ITEM(hit, 0));
        if (r == 0 && PyTuple_GET_SIZE(PyTuple_GET_ITEM(hit, 1))) r = used_note_gsa(s, talker, PyTuple_GET_ITEM(hit, 1));
        Py_DECREF(hit);
        if (r < 0) goto done;
    }
    used_open_clear(s);
    rc = 0;
done:
    Py_DECREF(memo);
    Py_DECREF(view);
    return rc;
}

static int held(PyObject *mono, PyObject *last_mono) /* mono - last_mono <= USED_HOLD_S */
{
    if (PyFloat_CheckExact(mono) && PyFloat_CheckExact(last_mono))
        return PyFloat_AS_DOUBLE(mono) - PyFloat_AS_DOUBLE(last_mono) <= USED_HOLD_S;
    PyObject *d = PyNumber_Subtract(mono, last_mono), *c = d != NULL ? PyObject_RichCompare(d, used_hold, Py_LE) : NULL;
    int r = c != NULL ? PyObject_IsTrue(c) : -1;
    Py_XDECREF(d);
    Py_XDECREF(c);
    return r;
}

static PyObject *frozen(PyObject *used) /* frozenset(used) */
{
    return PyFrozenSet_CheckExact(used) ? Py_NewRef(used) : PyFrozenSet_New(used);
}

/* 1 when used is an exact set of exact (str, int) pairs and last an exact frozenset: then
 * `frozenset(used) == last` is `used == last` (the same look-ups by the stored hashes, and comparing
 * such pairs runs no code), so the frozenset need not be made when they are equal */
static int plain_pairs(PyObject *used, PyObject *last)
{
    if (!PySet_CheckExact(used) || !PyFrozenSet_CheckExact(last) || PySet_GET_SIZE(used) != PySet_GET_SIZE(last))
        return 0; /* (of another size they differ: no walk over the elements) */
    Py_ssize_t pos = 0;
    PyObject *k;
    Py_hash_t h;
    while (_PySet_NextEntry(used, &pos, &k, &h))
        if (!PyTuple_CheckExact(k) || PyTuple_GET_SIZE(k) != 2 || !PyUnicode_CheckExact(PyTuple_GET_ITEM(k, 0))
            || !PyLong_CheckExact(PyTuple_GET_ITEM(k, 1)))
            return 0;
    return 1;
}

PyObject *used_close(Tracker *s, PyObject *used, PyObject *in_view, PyObject *mono)
{
    PyObject *out;
    if (s->nopen && place_open(s, used, in_view) < 0) return NULL;
    if (s->seen_gsa) {
        int same = -2;
        if (plain_pairs(used, s->last) && (same = PyObject_RichCompareBool(used, s->last, Py_EQ)) < 0) return NULL;
        out = same == 1 ? Py_NewRef(s->last) : frozen(used);
        if (out == NULL) return NULL;
        if (same == -2) same = PyObject_RichCompareBool(out, s->last, Py_EQ);
        if (same < 0) {
            Py_DECREF(out);
            return NULL;
        }
        if (same) Py_SETREF(out, Py_NewRef(s->last)); /* the same object while the list holds */
        Py_SETREF(s->last, Py_NewRef(out));
        Py_SETREF(s->last_mono, Py_NewRef(mono));
    } else {
        int r = held(mono, s->last_mono);
        if (r < 0) return NULL;
        if (r) {
            if ((r = PyObject_IsTrue(used)) < 0) return NULL;
            out = r ? PyNumber_Or(s->last, used) : Py_NewRef(s->last);
        } else {
            out = frozen(used);
        }
        if (out == NULL) return NULL;
    }
    s->seen_gsa = 0;
    PyObject *unknown;
    if (s->nlabels) {
        PyObject *set = PySet_New(NULL), *list = NULL;
        for (int i = 0; set != NULL && i < s->nlabels; i++)
            if (PySet_Add(set, s->labels[i]) < 0) Py_CLEAR(set);
        if (set != NULL && (list = PySequence_List(set)) != NULL && PyList_Sort(list) == 0)
            unknown = PyList_AsTuple(list);
        else
            unknown = NULL;
        Py_XDECREF(set);
        Py_XDECREF(list);
        if (unknown == NULL) {
            Py_DECREF(out);
            return NULL;
        }
    } else {
        unknown = PyTuple_New(0);
    }
    Py_XSETREF(s->unknown, unknown);
    used_labels_clear(s);
    return out;
}

int used_close_init(void)
{
    if ((S_UPDATE = PyUnicode_InternFromString("update")) == NULL
        || (used_hold = PyFloat_FromDouble(USED_HOLD_S)) == NULL)
        return -1;
    return 0;
}
