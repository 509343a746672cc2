/* livefix.state._usedcore: the GSA used-set tracker of livefix/state/used.py (UsedTracker) in C.
 *
 * Why: a receiver sends several GSA lines per epoch, nearly all repeats of lines seen before, and
 * the Python tracker spends about a microsecond per line on its memo look-ups. The pure-Python class
 * stays the reference: this twin takes the same steps in the same order, keeps the same memos with
 * the same caps and clearing, and hands back the very same objects where the reference does (a GSA's
 * placed pairs on a memo hit; close() returns the previous frozenset while the used list holds, and
 * the state model and the statistics skip work by that identity). tests/state/test_used_native.py
 * compares every call of the two. The numbering tables (livefix.state.prn) are not duplicated: a GSA
 * never seen before goes to used.classify, an open list never placed against this sky to used.place.
 *
 * What is held: the open lists and unknown labels of the epoch, the classification memo by value (a
 * dict, cleared past BY_VALUE_MAX) and by identity of read-only field mappings (an open-addressing
 * table keyed by the mapping's address, holding the mapping so the address stays unique; cleared
 * past BY_ID_MAX), and the placing memo of the current sky object (a dict, new when the sky is).
 *
 * The module's files: this one (the UsedTracker type and the module), _usedcore_add.c (add_gsa(),
 * its memos, note_unknown()), _usedcore_close.c (close() and the placing of the open lists) and
 * their private header _usedcore.h.
 */
#include "_usedcore.h"
#include <structmember.h>

/* ---- methods: a call calling back in (a get(), in_view(), a comparison) is refused ---- */

static int enter(Tracker *s, const char *name, Py_ssize_t nargs, Py_ssize_t want)
{
    if (nargs != want) {
        PyErr_Format(PyExc_TypeError, "%s() takes %zd arguments (%zd given)", name, want, nargs);
        return -1;
    }
    if (s->busy || s->by_value == NULL) {
        PyErr_Format(PyExc_RuntimeError, s->busy ? "UsedTracker.%s() called re-entrantly"
                                                 : "UsedTracker.%s() on a cleared tracker", name);
        return -1;
    }
    s->busy = 1;
    return 0;
}

static PyObject *tr_add_gsa(Tracker *s, PyObject *const *args, Py_ssize_t nargs)
{
    if (enter(s, "add_gsa", nargs, 2) < 0) return NULL;
    PyObject *r = used_add(s, args[0], args[1]);
    s->busy = 0;
    return r;
}

static PyObject *tr_note_unknown(Tracker *s, PyObject *const *args, Py_ssize_t nargs)
{
    if (enter(s, "note_unknown", nargs, 2) < 0) return NULL;
    int r = used_note_unknown(s, args[0], args[1]);
    s->busy = 0;
    return r < 0 ? NULL : Py_NewRef(Py_None);
}

static PyObject *tr_close(Tracker *s, PyObject *const *args, Py_ssize_t nargs)
{
    if (enter(s, "close", nargs, 3) < 0) return NULL;
    PyObject *r = used_close(s, args[0], args[1], args[2]);
    s->busy = 0;
    return r;
}

/* ---- the type ---- */

static int tr_traverse(Tracker *s, visitproc visit, void *arg)
{
    Py_VISIT(s->unknown);
    Py_VISIT(s->classify);
    Py_VISIT(s->place);
    Py_VISIT(s->by_value);
    Py_VISIT(s->placed_for);
    Py_VISIT(s->placed);
    Py_VISIT(s->last);
    Py_VISIT(s->last_mono);
    for (int i = 0; i < s->nlabels; i++) Py_VISIT(s->labels[i]);
    for (Py_ssize_t i = 0; i < s->nopen; i++) {
        Py_VISIT(s->open[i].talker);
        Py_VISIT(s->open[i].nums);
    }
    for (size_t i = 0; s->memo != NULL && i < s->memo_cap; i++) {
        if (s->memo[i].f == NULL) continue;
        Py_VISIT(s->memo[i].f);
        Py_VISIT(s->memo[i].g);
    }
    return 0;
}

static int tr_clear(Tracker *s)
{
    used_open_clear(s);
    PyMem_Free(s->open);
    s->open = NULL;
    s->open_cap = 0;
    used_labels_clear(s);
    used_memo_clear(s);
    Py_CLEAR(s->unknown);
    Py_CLEAR(s->classify);
    Py_CLEAR(s->place);
    Py_CLEAR(s->by_value);
    Py_CLEAR(s->placed_for);
    Py_CLEAR(s->placed);
    Py_CLEAR(s->last);
    Py_CLEAR(s->last_mono);
    return 0;
}

static void tr_dealloc(Tracker *s)
{
    PyObject_GC_UnTrack(s);
    tr_clear(s);
    Py_TYPE(s)->tp_free((PyObject *)s);
}

static PyObject *tr_new(PyTypeObject *type, PyObject *args, PyObject *kwds)
{
    static char *names[] = {"classify", "place", NULL};
    PyObject *classify, *place;
    if (!PyArg_ParseTupleAndKeywords(args, kwds, "OO:UsedTracker", names, &classify, &place)) return NULL;
    if (!PyCallable_Check(classify) || !PyCallable_Check(place)) {
        PyErr_SetString(PyExc_TypeError, "UsedTracker: classify and place must be callable");
        return NULL;
    }
    Tracker *s = (Tracker *)type->tp_alloc(type, 0);
    if (s == NULL) return NULL;
    s->classify = Py_NewRef(classify);
    s->place = Py_NewRef(place);
    s->placed_for = Py_NewRef(Py_None);
    if ((s->unknown = PyTuple_New(0)) == NULL || (s->last_mono = PyFloat_FromDouble(-Py_HUGE_VAL)) == NULL
        || (s->last = PyFrozenSet_New(NULL)) == NULL || (s->placed = PyDict_New()) == NULL
        || (s->by_value = PyDict_New()) == NULL) {
        Py_DECREF(s);
        return NULL;
    }
    return (PyObject *)s;
}

static PyObject *get_open(Tracker *s, void *closure) /* a copy: [(talker, numbers), ...] */
{
    (void)closure;
    PyObject *out = PyList_New(s->nopen);
    for (Py_ssize_t i = 0; out != NULL && i < s->nopen; i++) {
        PyObject *t = PyTuple_Pack(2, s->open[i].talker, s->open[i].nums);
        if (t == NULL) Py_CLEAR(out);
        else PyList_SET_ITEM(out, i, t);
    }
    return out;
}

static PyObject *get_unknown(Tracker *s, void *closure) /* a copy of the open epoch's labels */
{
    (void)closure;
    PyObject *out = PyList_New(s->nlabels);
    for (int i = 0; out != NULL && i < s->nlabels; i++) PyList_SET_ITEM(out, i, Py_NewRef(s->labels[i]));
    return out;
}

static PyObject *get_seen(Tracker *s, void *closure)
{
    (void)closure;
    return PyBool_FromLong(s->seen_gsa);
}

static PyMethodDef tr_methods[] = {
    {"add_gsa", (PyCFunction)(void (*)(void))tr_add_gsa, METH_FASTCALL,
     "add_gsa(talker, fields) -> the pairs this GSA places now (the rest waits for close)"},
    {"note_unknown", (PyCFunction)(void (*)(void))tr_note_unknown, METH_FASTCALL,
     "note_unknown(source, numbers): numbers no block fits (from GSA or GSV) in the open epoch"},
    {"close", (PyCFunction)(void (*)(void))tr_close, METH_FASTCALL,
     "close(used, in_view, mono) -> the epoch's used set; resets for the next epoch"},
    {NULL, NULL, 0, NULL}};

static PyMemberDef tr_members[] = {
    {"unknown", T_OBJECT, offsetof(Tracker, unknown), READONLY, "labels of the epoch last closed"},
    {"unknown_total", T_PYSSIZET, offsetof(Tracker, unknown_total), 0, "listed numbers no block fits, whole stream"},
    {"_last", T_OBJECT, offsetof(Tracker, last), READONLY, "the used set last closed with a GSA"},
    {"_last_mono", T_OBJECT, offsetof(Tracker, last_mono), READONLY, "its host time"},
    {NULL, 0, 0, 0, NULL}};

static PyGetSetDef tr_getset[] = {
    {"_open", (getter)get_open, NULL, "open lists of the epoch: [(talker, numbers)], a copy", NULL},
    {"_unknown", (getter)get_unknown, NULL, "unknown labels of the open epoch, a copy", NULL},
    {"_seen_gsa", (getter)get_seen, NULL, "a GSA arrived in the open epoch", NULL},
    {NULL, NULL, NULL, NULL, NULL}};

PyDoc_STRVAR(tr_doc,
"UsedTracker(classify, place)\n\n"
"The C twin of livefix.state.used.UsedTracker (use livefix.state.used.make_used_tracker()): the same\n"
"results, attributes and object identities. classify and place are used.classify and used.place.");

static PyTypeObject TrackerType = {
    PyVarObject_HEAD_INIT(NULL, 0)
    .tp_name = "livefix.state._usedcore.UsedTracker",
    .tp_basicsize = sizeof(Tracker),
    .tp_flags = Py_TPFLAGS_DEFAULT | Py_TPFLAGS_HAVE_GC,
    .tp_doc = tr_doc,
    .tp_new = tr_new,
    .tp_dealloc = (destructor)tr_dealloc,
    .tp_traverse = (traverseproc)tr_traverse,
    .tp_clear = (inquiry)tr_clear,
    .tp_methods = tr_methods,
    .tp_members = tr_members,
    .tp_getset = tr_getset,
};

static struct PyModuleDef MODULE = {PyModuleDef_HEAD_INIT, "livefix.state._usedcore",
                                    "GSA used-set tracking in C (see livefix/state/used.py).", -1, NULL,
                                    NULL, NULL, NULL, NULL};

PyMODINIT_FUNC PyInit__usedcore(void)
{
    if (used_add_init() < 0 || used_close_init() < 0) return NULL;
    if (PyType_Ready(&TrackerType) < 0) return NULL;
    PyObject *mod = PyModule_Create(&MODULE);
    if (mod == NULL) return NULL;
    if (PyModule_AddObjectRef(mod, "UsedTracker", (PyObject *)&TrackerType) < 0
        || PyModule_AddIntConstant(mod, "BY_VALUE_MAX", BY_VALUE_MAX) < 0
        || PyModule_AddIntConstant(mod, "BY_ID_MAX", BY_ID_MAX) < 0
        || PyModule_AddIntConstant(mod, "MAX_UNKNOWN", MAX_UNKNOWN) < 0
        || PyModule_AddObjectRef(mod, "USED_HOLD_S", used_hold) < 0) {
        Py_DECREF(mod);
        return NULL;
    }
    return mod;
}
