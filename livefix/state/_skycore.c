/* livefix.state._skycore: the sky store of livefix/state/sky.py (Sky) in C.
 *
 * Why: the state model calls the sky four or more times per epoch (a replace() per complete GSV
 * set, expire() twice, in_view(), obs()), and in Python each call builds the group signature and
 * compares it, a few microseconds per epoch at 10-20 Hz. The Python class stays the reference: this
 * twin keeps the same two ordered dicts, makes the same comparisons in the same order, and hands
 * back the very same objects where the reference does (obs() one tuple while only listing times
 * changed, in_view() one frozenset while its content holds, seen() one tuple while nothing changed),
 * since the statistics and the used tracker skip work by identity. tests/state/test_sky_native.py
 * compares every call of the two.
 *
 * The signature (the groups in order, then their satellite lists by identity) is built once per
 * change instead of once per call; a cache whose signature equals the current one takes the
 * current object, so the next check is a pointer comparison.
 */
#include "_skycore.h"
#include <string.h>

#define GUARD(s, name)                                                                          \
    if ((s)->busy || (s)->groups == NULL) {                                                     \
        PyErr_SetString(PyExc_RuntimeError, (s)->busy ? "Sky." name "() called re-entrantly"     \
                                                      : "Sky." name "() on a cleared sky");      \
        return NULL;                                                                            \
    }

/* `a < b` (op Py_LT) or `a >= b` (Py_GE): 1, 0, -1 on error */
static inline int order(PyObject *a, PyObject *b, int op)
{
    if (PyFloat_CheckExact(a) && PyFloat_CheckExact(b)) {
        double x = PyFloat_AS_DOUBLE(a), y = PyFloat_AS_DOUBLE(b);
        return op == Py_LT ? x < y : x >= y;
    }
    return PyObject_RichCompareBool(a, b, op);
}

PyObject *sky_signature(Sky *s)
{
    if (s->sig != NULL) return s->sig;
    Py_ssize_t n = PyDict_GET_SIZE(s->groups), pos = 0, i = 0;
    PyObject *t = PyTuple_New(2 * n), *k, *v;
    if (t == NULL) return NULL;
    while (i < n && PyDict_Next(s->groups, &pos, &k, &v)) {
        PyTuple_SET_ITEM(t, i, Py_NewRef(k));
        PyTuple_SET_ITEM(t, n + i, Py_NewRef(v));
        i++;
    }
    s->sig = t;
    return t;
}

int sky_sig_same(PyObject *a, PyObject *b)
{
    if (a == b) return 1;
    Py_ssize_t n = PyTuple_GET_SIZE(a);
    if (n != PyTuple_GET_SIZE(b)) return 0;
    for (Py_ssize_t i = n / 2; i < n; i++)
        if (PyTuple_GET_ITEM(a, i) != PyTuple_GET_ITEM(b, i)) return 0;  /* the lists: by identity */
    for (Py_ssize_t i = 0; i < n / 2; i++) {  /* the groups: as tuple items compare */
        int r = PyObject_RichCompareBool(PyTuple_GET_ITEM(a, i), PyTuple_GET_ITEM(b, i), Py_EQ);
        if (r <= 0) return r;
    }
    return 1;
}

static int sky_replace_body(Sky *s, PyObject *group, PyObject *sats, PyObject *mono, PyObject **popped)
{
    PyObject *g = s->groups, *m = s->monos;
    Py_hash_t h = sky_plain_hash(group);
    /* groups.pop(group, None): of no groups, None without hashing the key (as dict.pop) */
    PyObject *old = PyDict_GET_SIZE(g) == 0 ? NULL : SKY_GET(g, group, h);
    if (old == NULL && PyErr_Occurred()) return -1;
    if (old != NULL) {
        *popped = Py_NewRef(old);
        Py_CLEAR(s->sig);
        if (SKY_DEL(g, group, h) < 0) return -1;
    }
    if ((old == NULL || old == Py_None) && PyDict_GET_SIZE(g) >= s->max_groups) {
        Py_ssize_t pos = 0;
        PyObject *k, *v;
        if (!PyDict_Next(g, &pos, &k, &v)) {  /* next(iter(groups)) of no groups */
            PyErr_SetNone(PyExc_StopIteration);
            return -1;
        }
        Py_INCREF(k);
        Py_CLEAR(s->sig);
        int bad = PyDict_DelItem(g, k) < 0 || PyDict_DelItem(m, k) < 0;
        Py_DECREF(k);
        if (bad) return -1;
    }
    old = PyDict_GET_SIZE(m) == 0 ? NULL : SKY_GET(m, group, h);  /* monos.pop(group, None) */
    if (old == NULL && PyErr_Occurred()) return -1;
    if (old != NULL && SKY_DEL(m, group, h) < 0) return -1;
    Py_CLEAR(s->sig);
    if (SKY_SET(g, group, sats, h) < 0 || SKY_SET(m, group, mono, h) < 0) return -1;
    int lt = order(mono, s->oldest, Py_LT);
    if (lt > 0) Py_SETREF(s->oldest, Py_NewRef(mono));
    return lt < 0 ? -1 : 0;
}

static PyObject *sky_replace(Sky *s, PyObject *const *args, Py_ssize_t nargs)
{
    if (nargs != 3) {
        PyErr_Format(PyExc_TypeError, "replace() takes 3 arguments (%zd given)", nargs);
        return NULL;
    }
    GUARD(s, "replace")
    s->busy = 1;
    PyObject *popped = NULL;  /* dropped last: freeing the old list may run code */
    int r = sky_replace_body(s, args[0], args[1], args[2], &popped);
    s->busy = 0;
    Py_XDECREF(popped);
    return r < 0 ? NULL : Py_NewRef(Py_None);
}

/* the groups listed before `limit` go; the bound is the oldest time left (inf for none) */
static int sky_expire_below(Sky *s, PyObject *limit)
{
    PyObject *gone = PyList_New(0), *k, *v, *best = NULL;
    if (gone == NULL) return -1;
    Py_ssize_t pos = 0;
    int r = 0;
    while (r == 0 && PyDict_Next(s->monos, &pos, &k, &v)) {
        Py_INCREF(k);
        Py_INCREF(v);
        int lt = order(v, limit, Py_LT);
        r = lt < 0 || (lt > 0 && PyList_Append(gone, k) < 0) ? -1 : 0;
        Py_DECREF(k);
        Py_DECREF(v);
    }
    for (Py_ssize_t i = 0; r == 0 && i < PyList_GET_SIZE(gone); i++) {
        k = PyList_GET_ITEM(gone, i);
        Py_CLEAR(s->sig);
        r = PyDict_DelItem(s->groups, k) < 0 || PyDict_DelItem(s->monos, k) < 0 ? -1 : 0;
    }
    pos = 0;
    while (r == 0 && PyDict_Next(s->monos, &pos, &k, &v)) {  /* min(monos.values(), default=inf) */
        if (best == NULL) {
            best = Py_NewRef(v);
            continue;
        }
        Py_INCREF(v);
        int lt = order(v, best, Py_LT);
        if (lt > 0) Py_SETREF(best, Py_NewRef(v));
        Py_DECREF(v);
        r = lt < 0 ? -1 : 0;
    }
    if (r == 0 && best == NULL && (best = PyFloat_FromDouble(Py_HUGE_VAL)) == NULL) r = -1;
    if (r == 0) Py_SETREF(s->oldest, best);
    else Py_XDECREF(best);
    Py_DECREF(gone);
    return r;
}

static PyObject *sky_expire(Sky *s, PyObject *now)
{
    GUARD(s, "expire")
    PyObject *limit;
    if (PyFloat_CheckExact(now) && PyFloat_CheckExact(s->timeout_s)) {
        double x = PyFloat_AS_DOUBLE(now) - PyFloat_AS_DOUBLE(s->timeout_s);
        if (PyFloat_CheckExact(s->oldest) && PyFloat_AS_DOUBLE(s->oldest) >= x)
            Py_RETURN_NONE;  /* called twice an epoch: usually nothing is that old */
        limit = PyFloat_FromDouble(x);
    } else {
        limit = PyNumber_Subtract(now, s->timeout_s);
    }
    if (limit == NULL) return NULL;
    s->busy = 1;
    int ge = order(s->oldest, limit, Py_GE);
    int r = ge != 0 ? ge : sky_expire_below(s, limit);
    s->busy = 0;
    Py_DECREF(limit);
    return r < 0 ? NULL : Py_NewRef(Py_None);
}

/* frozenset([(s[0], s[1]) for sats in groups.values() for s in sats]) */
static PyObject *sky_listed(Sky *s)
{
    PyObject *pairs = PyList_New(0), *k, *sats, *out = NULL;
    if (pairs == NULL) return NULL;
    Py_ssize_t pos = 0;
    int r = 0;
    while (r == 0 && PyDict_Next(s->groups, &pos, &k, &sats)) {
        PyObject *it = PyObject_GetIter(sats), *item;
        if (it == NULL) r = -1;
        while (r == 0 && (item = PyIter_Next(it)) != NULL) {
            PyObject *a, *b, *pair = NULL;
            if (PyTuple_CheckExact(item) && PyTuple_GET_SIZE(item) >= 2) {
                a = Py_NewRef(PyTuple_GET_ITEM(item, 0));
                b = Py_NewRef(PyTuple_GET_ITEM(item, 1));
            } else {
                PyObject *i0 = PyLong_FromLong(0), *i1 = PyLong_FromLong(1);
                a = i0 == NULL ? NULL : PyObject_GetItem(item, i0);
                b = a == NULL || i1 == NULL ? NULL : PyObject_GetItem(item, i1);
                Py_XDECREF(i0);
                Py_XDECREF(i1);
            }
            if (a != NULL && b != NULL) pair = PyTuple_Pack(2, a, b);
            r = pair == NULL || PyList_Append(pairs, pair) < 0 ? -1 : 0;
            Py_XDECREF(pair);
            Py_XDECREF(a);
            Py_XDECREF(b);
            Py_DECREF(item);
        }
        if (r == 0 && PyErr_Occurred()) r = -1;  /* the iteration itself raised */
        Py_XDECREF(it);
    }
    if (r == 0) out = PyFrozenSet_New(pairs);
    Py_DECREF(pairs);
    return out;
}

static PyObject *sky_in_view(Sky *s, PyObject *unused)
{
    (void)unused;
    GUARD(s, "in_view")
    s->busy = 1;
    PyObject *sig = sky_signature(s), *now = NULL;
    int same = sig == NULL ? -1 : s->view == NULL ? 0 : sky_sig_same(s->view_sig, sig);
    if (same == 0 && (now = sky_listed(s)) == NULL) same = -1;
    if (same == 0) {
        int keep = s->view == NULL ? 0 : sky_cmp(s->view, now, Py_EQ);
        if (keep < 0) same = -1;
        else if (!keep) Py_XSETREF(s->view, Py_NewRef(now));
    }
    if (same >= 0) Py_XSETREF(s->view_sig, Py_NewRef(sig));  /* equal: the current one, cheaper next time */
    s->busy = 0;
    Py_XDECREF(now);
    return same < 0 ? NULL : Py_NewRef(s->view);
}

static PyObject *sky_obs_m(Sky *s, PyObject *used)
{
    GUARD(s, "obs")
    s->busy = 1;
    PyObject *r = sky_obs(s, used);
    s->busy = 0;
    return r;
}

static PyObject *sky_seen_m(Sky *s, PyObject *used)
{
    GUARD(s, "seen")
    s->busy = 1;
    PyObject *r = sky_seen(s, used);
    s->busy = 0;
    return r;
}

/* ---- the type ---- */

#define FIELDS(X) X(timeout_s) X(satobs) X(rank) X(groups) X(monos) X(oldest) X(sig) X(view_sig) X(view) \
    X(lay_sig) X(lay) X(lean) X(seen_lay) X(seen_monos) X(seen_out) X(order_keys) X(order_idx) X(zero)

static int sky_traverse(Sky *s, visitproc visit, void *arg)
{
#define VISIT(f) Py_VISIT(s->f);
    FIELDS(VISIT)
#undef VISIT
    return 0;
}

static int sky_clear(Sky *s)
{
#define CLEAR(f) Py_CLEAR(s->f);
    FIELDS(CLEAR)
#undef CLEAR
    return 0;
}

static void sky_dealloc(Sky *s)
{
    PyObject_GC_UnTrack(s);
    sky_clear(s);
    Py_TYPE(s)->tp_free((PyObject *)s);
}

/* SatObs may be made by filling its slots: a class of exactly these 8 object slots, on object,
 * with nothing else to set up (as livefix._native make() checks); 0, or -1 with TypeError */
static int satobs_slots(PyObject *type, Py_ssize_t *off)
{
    static const char *const names[8] = {"system", "prn", "signal", "elev", "azim", "cn0", "used", "last_seen_mono"};
    PyTypeObject *tp = (PyTypeObject *)type;
    if (!PyType_Check(type) || !(tp->tp_flags & Py_TPFLAGS_HEAPTYPE) || tp->tp_base != &PyBaseObject_Type
        || tp->tp_itemsize != 0 || tp->tp_dictoffset != 0 || tp->tp_weaklistoffset != 0
        || tp->tp_basicsize != (Py_ssize_t)(sizeof(PyObject) + 8 * sizeof(PyObject *))) {
        PyErr_SetString(PyExc_TypeError, "Sky: satobs must be a class of 8 __slots__ only, on object");
        return -1;
    }
    if (kit_slot_offsets(type, names, 8, off, "Sky: %s is not an object slot of %R") < 0) return -1;
    for (int i = 0; i < 8; i++) {
        int bad = off[i] < (Py_ssize_t)sizeof(PyObject) || off[i] > tp->tp_basicsize - (Py_ssize_t)sizeof(PyObject *);
        for (int j = 0; j < i; j++) bad |= off[j] == off[i];
        if (bad) {
            PyErr_Format(PyExc_TypeError, "Sky: slot %s of %R is not its own", names[i], type);
            return -1;
        }
    }
    return 0;
}

static PyObject *sky_new(PyTypeObject *type, PyObject *args, PyObject *kwds)
{
    static char *names[] = {"timeout_s", "max_groups", "satobs", "system_order", NULL};
    PyObject *timeout, *satobs, *rank;
    Py_ssize_t max_groups, off[8];
    if (!PyArg_ParseTupleAndKeywords(args, kwds, "OnOO!:Sky", names, &timeout, &max_groups, &satobs, &PyDict_Type, &rank))
        return NULL;
    if (satobs_slots(satobs, off) < 0) return NULL;
    Sky *s = (Sky *)type->tp_alloc(type, 0);
    if (s == NULL) return NULL;
    s->timeout_s = Py_NewRef(timeout);
    s->max_groups = max_groups;
    s->satobs = Py_NewRef(satobs);
    memcpy(s->off, off, sizeof off);
    s->rank = Py_NewRef(rank);
    s->lean = PyTuple_New(0);
    s->order_keys = PyTuple_New(0);
    if ((s->groups = PyDict_New()) == NULL || (s->monos = PyDict_New()) == NULL || s->lean == NULL
        || s->order_keys == NULL || (s->order_idx = PyList_New(0)) == NULL
        || (s->oldest = PyFloat_FromDouble(Py_HUGE_VAL)) == NULL || (s->zero = PyFloat_FromDouble(0.0)) == NULL) {
        Py_DECREF(s);
        return NULL;
    }
    return (PyObject *)s;
}

static PyObject *sky_copy(Sky *s, void *closure)
{
    PyObject *d = closure == NULL ? s->groups : s->monos;
    if (d == NULL) return PyDict_New();
    return PyDict_Copy(d);
}

PyDoc_STRVAR(replace_doc, "replace(group, sats, mono): the latest complete set of a group, listed at host time mono");
PyDoc_STRVAR(expire_doc, "expire(now_mono): groups not listed for timeout_s host seconds drop out");
PyDoc_STRVAR(in_view_doc, "in_view() -> frozenset of (system, prn) listed now; the same object while its content holds");
PyDoc_STRVAR(obs_doc, "obs(used) -> sorted SatObs tuple; the same object while only listing times changed");
PyDoc_STRVAR(seen_doc, "seen(used) -> like obs(), with last_seen_mono set to each set's listing time");

static PyMethodDef sky_methods[] = {
    {"replace", (PyCFunction)(void (*)(void))sky_replace, METH_FASTCALL, replace_doc},
    {"expire", (PyCFunction)sky_expire, METH_O, expire_doc},
    {"in_view", (PyCFunction)sky_in_view, METH_NOARGS, in_view_doc},
    {"obs", (PyCFunction)sky_obs_m, METH_O, obs_doc},
    {"seen", (PyCFunction)sky_seen_m, METH_O, seen_doc},
    {NULL, NULL, 0, NULL}};

static PyMemberDef sky_members[] = {
    {"timeout_s", T_OBJECT, offsetof(Sky, timeout_s), READONLY, "host seconds a group stays unlisted before it goes"},
    {"max_groups", T_PYSSIZET, offsetof(Sky, max_groups), READONLY, "groups held at most (the oldest listed goes)"},
    {"_oldest", T_OBJECT, offsetof(Sky, oldest), READONLY, "at most the oldest listing time"},
    {NULL, 0, 0, 0, NULL}};

static PyGetSetDef sky_getset[] = {
    {"_groups", (getter)sky_copy, NULL, "group -> satellites, in order of last update (a copy)", NULL},
    {"_mono", (getter)sky_copy, NULL, "group -> host time last listed, same order (a copy)", (void *)1},
    {NULL, NULL, NULL, NULL, NULL}};

PyDoc_STRVAR(sky_doc,
"Sky(timeout_s, max_groups, satobs, system_order)\n\n"
"The C twin of livefix.state.sky.Sky (use livefix.state.sky.make_sky()): the same results and\n"
"object identities. satobs is livefix.state.epoch.SatObs (made by filling its slots, as\n"
"epoch.make_satobs does), system_order sky.SYSTEM_ORDER.");

static PyTypeObject SkyType = {
    PyVarObject_HEAD_INIT(NULL, 0)
    .tp_name = "livefix.state._skycore.Sky",
    .tp_basicsize = sizeof(Sky),
    .tp_flags = Py_TPFLAGS_DEFAULT | Py_TPFLAGS_HAVE_GC,
    .tp_doc = sky_doc,
    .tp_new = sky_new,
    .tp_dealloc = (destructor)sky_dealloc,
    .tp_traverse = (traverseproc)sky_traverse,
    .tp_clear = (inquiry)sky_clear,
    .tp_methods = sky_methods,
    .tp_members = sky_members,
    .tp_getset = sky_getset,
};

static struct PyModuleDef MODULE = {PyModuleDef_HEAD_INIT, "livefix.state._skycore",
                                    "The sky store in C (see livefix/state/sky.py).", -1, NULL,
                                    NULL, NULL, NULL, NULL};

PyMODINIT_FUNC PyInit__skycore(void)
{
    if (PyType_Ready(&SkyType) < 0) return NULL;
    PyObject *mod = PyModule_Create(&MODULE);
    if (mod == NULL) return NULL;
    if (PyModule_AddObjectRef(mod, "Sky", (PyObject *)&SkyType) < 0
        || PyModule_AddIntConstant(mod, "SKY_API", SKY_API) < 0) {
        Py_DECREF(mod);
        return NULL;
    }
    return mod;
}
