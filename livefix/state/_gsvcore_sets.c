/* livefix.state._gsvcore: the end of a set (gsv.GsvAssembler._end, _waiting_for and the check for a
 * part of the set just completed sent again): the same branches in the same order as the Python
 * class, handing back the very same list object while a set repeats (livefix.state.sky skips work
 * by that identity).
 */
#include "_gsvcore.h"

static PyObject *flatten(Partial *p)  /* every satellite of the parts that arrived, in part order */
{
    Py_ssize_t n = 0, k = 0;
    for (int i = 0; i < p->num_msg; i++)
        if (p->parts[i] != NULL) n += PyTuple_GET_SIZE(p->parts[i]);
    PyObject *out = PyList_New(n);
    for (int i = 0; out != NULL && i < p->num_msg; i++)
        for (Py_ssize_t j = 0; p->parts[i] != NULL && j < PyTuple_GET_SIZE(p->parts[i]); j++)
            PyList_SET_ITEM(out, k++, Py_NewRef(PyTuple_GET_ITEM(p->parts[i], j)));
    return out;
}

static PyObject *sat_id(PyObject *sat)  /* (s[0], s[1]) */
{
    if (PyTuple_Check(sat) && PyTuple_GET_SIZE(sat) >= 2)
        return PyTuple_Pack(2, PyTuple_GET_ITEM(sat, 0), PyTuple_GET_ITEM(sat, 1));
    PyObject *a = PySequence_GetItem(sat, 0), *b = a ? PySequence_GetItem(sat, 1) : NULL;
    PyObject *r = b ? PyTuple_Pack(2, a, b) : NULL;
    Py_XDECREF(a);
    Py_XDECREF(b);
    return r;
}

/* a set that lost a part: add the previous set's satellites not listed now when their number is
 * exactly what the satellites-in-view total says is missing (gsv.GsvAssembler._end) */
static int carry_over(PyObject *got, PyObject *prev, PyObject *total)
{
    PyObject *have = PySet_New(NULL), *carried = PyList_New(0), *seq = PySequence_Fast(prev, "a list");
    int rc = -1;
    if (have == NULL || carried == NULL || seq == NULL) goto done;
    for (Py_ssize_t i = 0; i < PyList_GET_SIZE(got); i++) {
        PyObject *id = sat_id(PyList_GET_ITEM(got, i));
        int r = id ? PySet_Add(have, id) : -1;
        Py_XDECREF(id);
        if (r < 0) goto done;
    }
    for (Py_ssize_t i = 0; i < PySequence_Fast_GET_SIZE(seq); i++) {
        PyObject *sat = PySequence_Fast_GET_ITEM(seq, i), *id = sat_id(sat);
        int r = id ? PySet_Contains(have, id) : -1;
        Py_XDECREF(id);
        if (r < 0 || (r == 0 && PyList_Append(carried, sat) < 0)) goto done;
    }
    int overflow;
    long long want = PyLong_AsLongLongAndOverflow(total, &overflow);
    Py_ssize_t n = PyList_GET_SIZE(got), c = PyList_GET_SIZE(carried);
    if (c && !overflow && want == (long long)(n + c) && PyList_SetSlice(got, n, n, carried) < 0) goto done;
    rc = 0;
done:
    Py_XDECREF(have);
    Py_XDECREF(carried);
    Py_XDECREF(seq);
    return rc;
}

/* gsv.GsvAssembler._end: publish a set that ended. Detaches p from the pending sets; the caller
 * frees it. *sats is NULL for None. */
int gsv_end_set(Asm *s, Partial *p, PyObject **key, PyObject **sats, int *n)
{
    int i = gsv_pending_index(s, p), whole = !p->missing;
    if (i >= 0) gsv_pending_take(s, i);
    *sats = NULL;
    *n = 0;
    PyObject *last = PyDict_GetItemWithError(s->last, p->key), *got = NULL;
    if (last == NULL && PyErr_Occurred()) return -1;
    Py_XINCREF(last);  /* the dict may be cleared below */
    for (i = 0; i < p->num_msg; i++)
        if (p->parts[i] == NULL) whole = 0;
    if (whole) {
        if (last != NULL) {  /* the same parts: the same set as last time */
            PyObject *lp = PyTuple_GET_ITEM(last, 0);
            int same = PyTuple_GET_SIZE(lp) == p->num_msg;
            for (i = 0; same == 1 && i < p->num_msg; i++) same = eq_bool(PyTuple_GET_ITEM(lp, i), p->parts[i]);
            if (same < 0) goto fail;
            if (same) {
                *sats = Py_NewRef(PyTuple_GET_ITEM(last, 1));
                goto ok;
            }
        }
        if ((got = flatten(p)) == NULL) goto fail;
        int same = last != NULL ? op_bool(PyTuple_GET_ITEM(last, 1), got, Py_EQ) : 0;
        if (same < 0) goto fail;
        if (same) {  /* same satellites, split differently: the same list */
            Py_SETREF(got, Py_NewRef(PyTuple_GET_ITEM(last, 1)));
        } else if (PyDict_GET_SIZE(s->last) >= MAX_GROUPS) {
            PyDict_Clear(s->last);
        }
        PyObject *parts = PyTuple_New(p->num_msg), *pair = NULL;
        for (i = 0; parts != NULL && i < p->num_msg; i++) PyTuple_SET_ITEM(parts, i, Py_NewRef(p->parts[i]));
        if (parts != NULL) pair = PyTuple_Pack(2, parts, got);
        Py_XDECREF(parts);
        int r = pair != NULL ? PyDict_SetItem(s->last, p->key, pair) : -1;
        Py_XDECREF(pair);
        if (r < 0) goto fail;
        *sats = got;
        goto ok;
    }
    s->broken++;
    if ((got = flatten(p)) == NULL) goto fail;
    if (last != NULL && PyLong_CheckExact(p->total) && carry_over(got, PyTuple_GET_ITEM(last, 1), p->total) < 0)
        goto fail;
    if (PyList_GET_SIZE(got)) *sats = got;
    else Py_DECREF(got);
    *n = 1;
ok:
    Py_XDECREF(last);
    *key = Py_NewRef(p->key);
    return 0;
fail:
    Py_XDECREF(last);
    Py_XDECREF(got);
    return -1;
}

/* gsv.GsvAssembler._waiting_for: the most recent set of another talker expecting exactly this part */
int gsv_waiting_for(Asm *s, PyObject *key, long num, long part, PyObject *total, Partial **found)
{
    *found = NULL;
    for (int i = 0; i < s->npending; i++) {
        Partial *q = s->pending[i];
        if (q->next_msg != part || q->num_msg != num) continue;
        int r = op_bool(q->total, total, Py_EQ);
        if (r == 1) r = op_bool(PyTuple_GET_ITEM(q->key, 1), PyTuple_GET_ITEM(key, 1), Py_EQ);
        if (r == 1) r = op_bool(PyTuple_GET_ITEM(q->key, 0), PyTuple_GET_ITEM(key, 0), Py_NE);
        if (r < 0) return -1;
        if (r) *found = q;
    }
    return 0;
}

int gsv_repeats_last(Asm *s, PyObject *key, long num, long part, PyObject *sats)
{
    PyObject *last = PyDict_GetItemWithError(s->last, key);
    if (last == NULL) return PyErr_Occurred() ? -1 : 0;
    PyObject *parts = PyTuple_GET_ITEM(last, 0);
    if (PyTuple_GET_SIZE(parts) != num) return 0;
    Py_INCREF(last);
    int r = op_bool(PyTuple_GET_ITEM(parts, part - 1), sats, Py_EQ);
    Py_DECREF(last);
    return r;
}

PyObject *gsv_result(PyObject *key, PyObject *sats, int n)
{
    PyObject *k = PyLong_FromLong(n), *r = k ? PyTuple_Pack(3, key, sats ? sats : Py_None, k) : NULL;
    Py_XDECREF(k);
    return r;
}
