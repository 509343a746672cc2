/* livefix.state._statecore: the open epoch's used set (op.used of livefix/state/model.py), made
 * only when needed, and the previous epoch's set handed to the tracker again when the epoch's GSA
 * lines repeat it (the rule and why it is exact: the Core struct in _statecore.h).
 */
#include "_statecore.h"

/* set.update(placed) */
static int update(PyObject *set, PyObject *placed)
{
    if (PyTuple_CheckExact(placed)) {
        for (Py_ssize_t i = 0; i < PyTuple_GET_SIZE(placed); i++)
            if (PySet_Add(set, PyTuple_GET_ITEM(placed, i)) < 0) return -1;
        return 0;
    }
    PyObject *it = PyObject_GetIter(placed), *x;
    if (it == NULL) return -1;
    while ((x = PyIter_Next(it)) != NULL) {
        int r = PySet_Add(set, x);
        Py_DECREF(x);
        if (r < 0) break;
    }
    Py_DECREF(it);
    return PyErr_Occurred() ? -1 : 0;
}

/* op.used made from the n tuples remembered so far, in their order */
static int make_used(Core *s, int n)
{
    if ((s->o_used = PySet_New(NULL)) == NULL) return -1;
    for (int i = 0; i < n; i++)
        if (update(s->o_used, s->gsa_seq[i]) < 0) return -1;
    return 0;
}

int st_join_used(Core *s, PyObject *placed)
{
    int n = s->gsa_n;
    if (n < MAX_GSA_SEQ) s->gsa_seq[n] = Py_NewRef(placed);
    s->gsa_n = n + 1;
    if (s->o_used == NULL) {
        if (s->prev_used != NULL && n < MAX_GSA_SEQ && n < s->gsa_prev_n && s->gsa_prev[n] == placed
            && PyTuple_CheckExact(placed))
            return 0; /* the previous epoch's tuple at this place: joined when the set is needed */
        if (make_used(s, n < MAX_GSA_SEQ ? n : MAX_GSA_SEQ) < 0) return -1;
    }
    return update(s->o_used, placed);
}

PyObject *st_take_used(Core *s)
{
    PyObject *u = s->o_used;
    if (u != NULL) {
        s->o_used = NULL;
        return u;
    }
    u = s->prev_used;
    if (u != NULL && s->gsa_n == s->gsa_prev_n && Py_REFCNT(u) == 1 && PySet_GET_SIZE(u) == s->prev_used_len) {
        s->prev_used = NULL; /* every tuple was the previous epoch's: its set, unchanged */
        s->used_reused++;
        return u;
    }
    if (make_used(s, s->gsa_n < MAX_GSA_SEQ ? s->gsa_n : MAX_GSA_SEQ) < 0) {
        Py_CLEAR(s->o_used);
        return NULL;
    }
    u = s->o_used;
    s->o_used = NULL;
    return u;
}

void st_used_forget(Core *s)
{
    Py_CLEAR(s->prev_used);
    for (int i = 0; i < MAX_GSA_SEQ; i++) Py_CLEAR(s->gsa_prev[i]);
    s->gsa_prev_n = -1;
}

int st_keep_used(Core *s, PyObject *used, Py_ssize_t len, PyObject **seq, int n)
{
    st_used_forget(s);
    PyObject *tracker = st_collab(s, C_GSA), *kinds = s->call[C_TRACKERS];
    if (tracker == NULL) return -1;
    int trusted = 0;
    for (Py_ssize_t i = 0; i < PyTuple_GET_SIZE(kinds); i++)
        trusted |= (PyObject *)Py_TYPE(tracker) == PyTuple_GET_ITEM(kinds, i);
    if (!trusted || n > MAX_GSA_SEQ || !PySet_CheckExact(used) || PySet_GET_SIZE(used) != len) return 0;
    s->prev_used = Py_NewRef(used);
    s->prev_used_len = len;
    for (int i = 0; i < n; i++) {
        s->gsa_prev[i] = seq[i];
        seq[i] = NULL;
    }
    s->gsa_prev_n = n;
    return 0;
}
