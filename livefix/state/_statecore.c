/* livefix.state._statecore: StateModel.on_sentence and StateModel._close of livefix/state/model.py in C.
 *
 * Why: at 10-20 Hz a receiver sends about twenty lines per epoch, and once the GSV and GSA cores did
 * their part the Python glue around them (dispatch, the open epoch's bookkeeping, the handlers and
 * the closing of an epoch) was most of the state model's cost. The Python StateModel stays the
 * reference: this twin takes the same steps in the same order, reads the same fields, calls the same
 * collaborators (the GSV assembler, the used tracker, the sky, the clock: only through their bound
 * methods) and writes into the model's own attribute dict what the reference writes there (_mono,
 * _wall, late, epochs, last_epoch, _open, _used, ...), so that the rest of the model (finish, sky,
 * on_link, ...) runs unchanged on either path. The open epoch lives in a C struct (a later C decoder
 * will feed it without Python objects per line). Rare paths call the reference's own helpers: TXT,
 * events, DTM, dates that need arithmetic, odd field types. tests/state/test_model_native.py
 * compares the two after every call.
 *
 * Files: this one (the EpochCore type and the module), _statecore_line.c (on_sentence's prelude),
 * _statecore_add.c (the handlers), _statecore_close.c (_close) and their private header _statecore.h.
 */
#include "_statecore.h"
#include <structmember.h>

/* ---- methods: a call calling back in (through a collaborator or a field's get()) is refused ---- */

static int enter(Core *s, const char *name, Py_ssize_t nargs, Py_ssize_t want)
{
    if (nargs != want) {
        PyErr_Format(PyExc_TypeError, "%s() takes %zd arguments (%zd given)", name, want, nargs);
        return -1;
    }
    if (s->busy || s->dict == NULL) {
        PyErr_Format(PyExc_RuntimeError, s->busy ? "EpochCore.%s() called re-entrantly"
                                                 : "EpochCore.%s() on a cleared core", name);
        return -1;
    }
    s->busy = 1;
    return 0;
}

static PyObject *core_on_sentence(Core *s, PyObject *const *args, Py_ssize_t nargs)
{
    if (enter(s, "on_sentence", nargs, 3) < 0) return NULL;
    PyObject *r = st_on_sentence(s, args[0], args[1], args[2]);
    s->busy = 0;
    return r;
}

static PyObject *core_close(Core *s, PyObject *const *args, Py_ssize_t nargs)
{
    (void)args;
    if (enter(s, "close", nargs, 0) < 0) return NULL;
    PyObject *r = st_close(s);
    s->busy = 0;
    return r;
}

/* ---- the model's collaborators: as the reference, whatever its attributes hold now ---- */

static const char *const COLLAB[] = {"_gsv", "_gsa", "_sky", "_clock"};
static PyObject *S_collab[4]; /* the same, interned */
static const char *const METHOD[] = {"add", "add_gsa", "note_unknown", "close", "replace", "expire", "in_view", "obs",
                                     "resolve"};
static const int OWNER[] = {C_GSV, C_GSA, C_GSA, C_GSA, C_SKY, C_SKY, C_SKY, C_SKY, C_CLOCK};

/* The offset of o.<name> when reading it is reading an object member (a T_OBJECT slot of an
 * immutable type with the generic getattr: the GSV core's last_unknown), else 0 */
static Py_ssize_t member_at(PyObject *o, PyObject *name)
{
    PyTypeObject *tp = Py_TYPE(o);
    if (tp->tp_getattro != PyObject_GenericGetAttr || !(tp->tp_flags & Py_TPFLAGS_IMMUTABLETYPE)) return 0;
    PyObject *d = _PyType_Lookup(tp, name);
    if (d == NULL || !Py_IS_TYPE(d, &PyMemberDescr_Type)) return 0;
    PyMemberDef *m = ((PyMemberDescrObject *)d)->d_member;
    return m->type == T_OBJECT && m->offset >= (Py_ssize_t)sizeof(PyObject) ? m->offset : 0;
}

PyObject *st_collab(Core *s, int obj)
{
    uint64_t stamp = kit_dict_stamp(s->dict);
    if (stamp != 0 && stamp == s->cstamp[obj - C_GSV]) return s->call[obj]; /* the dict is as when checked */
    s->cstamp[obj - C_GSV] = 0;
    PyObject *now = PyDict_GetItemWithError(s->dict, S_collab[obj - C_GSV]); /* one look-up; mostly the same */
    if (now == NULL) {
        if (PyErr_Occurred()) return NULL;
        PyErr_Format(PyExc_AttributeError, "'StateModel' object has no attribute '%s'", COLLAB[obj - C_GSV]);
        return NULL;
    }
    if (now == s->call[obj]) goto same;
    for (int m = C_GSV_ADD; m < NCALL; m++) { /* another collaborator: its bound methods, once */
        if (OWNER[m - C_GSV_ADD] != obj) continue;
        PyObject *b = PyObject_GetAttrString(now, METHOD[m - C_GSV_ADD]);
        if (b == NULL) return NULL;
        Py_XSETREF(s->call[m], b);
    }
    Py_XSETREF(s->call[obj], Py_NewRef(now));
    if (obj == C_GSV) s->unknown_at = member_at(now, st_s_last_unknown);
same: /* no code ran in between that changed the dict: it holds call[obj] while its stamp stays */
    if (kit_dict_stamp(s->dict) == stamp) s->cstamp[obj - C_GSV] = stamp;
    return now;
}

PyObject *st_method(Core *s, int m)
{
    return st_collab(s, OWNER[m - C_GSV_ADD]) == NULL ? NULL : s->call[m];
}

PyObject *st_call_model(Core *s, const char *name, PyObject *const *args, size_t n)
{
    PyObject *fn = PyObject_GetAttrString(s->model, name); /* rare paths: an instance's override counts */
    PyObject *r = fn == NULL ? NULL : PyObject_Vectorcall(fn, args, n, NULL);
    Py_XDECREF(fn);
    return r;
}

/* ---- the type ---- */

static int core_traverse(Core *s, visitproc visit, void *arg)
{
    Py_VISIT(s->model);
    Py_VISIT(s->dict);
    for (int i = 0; i < NCALL; i++) Py_VISIT(s->call[i]);
    Py_VISIT(s->tod_of);
    Py_VISIT(s->ahead_f);
    Py_VISIT(s->used);
    Py_VISIT(s->used_sorted);
    Py_VISIT(s->o_mono);
    Py_VISIT(s->o_wall);
    Py_VISIT(s->o_by_type);
    Py_VISIT(s->o_used);
    Py_VISIT(s->o_date);
    for (Py_ssize_t i = 0; i < s->nkeys; i++) {
        Py_VISIT(s->keys[i].talker);
        Py_VISIT(s->keys[i].mid);
        Py_VISIT(s->keys[i].key);
    }
    for (int i = 0; i < s->nsent; i++) Py_VISIT(s->sent[i]);
    for (int i = 0; i < MAX_GSA_SEQ; i++) {
        Py_VISIT(s->gsa_seq[i]);
        Py_VISIT(s->gsa_prev[i]);
    }
    Py_VISIT(s->prev_used);
    for (int i = 0; i < GSA_PICKS; i++) {
        Py_VISIT(s->picks[i].had);
        Py_VISIT(s->picks[i].f);
    }
    return 0;
}

static int core_clear(Core *s)
{
    st_open_clear(s);
    st_used_forget(s);
    st_picks_clear(s);
    s->mw_stamp = 0;
    s->unknown_at = 0;
    for (int i = 0; i < 4; i++) s->cstamp[i] = 0;
    for (int i = 0; i < s->nkinds; i++) Py_CLEAR(s->kinds[i].mid);
    s->nkinds = 0;
    PyMem_Free(s->keys);
    s->keys = NULL;
    s->keys_cap = 0;
    Py_CLEAR(s->model);
    Py_CLEAR(s->dict);
    for (int i = 0; i < NCALL; i++) Py_CLEAR(s->call[i]);
    Py_CLEAR(s->tod_of);
    Py_CLEAR(s->ahead_f);
    Py_CLEAR(s->used);
    Py_CLEAR(s->used_sorted);
    return 0;
}

static void core_dealloc(Core *s)
{
    PyObject_GC_UnTrack(s);
    core_clear(s);
    Py_TYPE(s)->tp_free((PyObject *)s);
}

/* model[name] from its dict, a new reference */
static PyObject *model_attr(PyObject *dict, const char *name)
{
    PyObject *v = PyDict_GetItemString(dict, name);
    if (v == NULL) PyErr_Format(PyExc_AttributeError, "the model has no %s", name);
    return Py_XNewRef(v);
}

static PyObject *core_new(PyTypeObject *type, PyObject *args, PyObject *kwds)
{
    static char *names[] = {"model", "calls", NULL};
    static const char *const slots[] = {"talker", "msg_id", "fields", "proprietary"};
    PyObject *model, *calls;
    if (!PyArg_ParseTupleAndKeywords(args, kwds, "OO!:EpochCore", names, &model, &PyTuple_Type, &calls)) return NULL;
    if (PyTuple_GET_SIZE(calls) != NHELP) {
        PyErr_Format(PyExc_TypeError, "EpochCore: %d helpers, %zd given", NHELP, PyTuple_GET_SIZE(calls));
        return NULL;
    }
    if (!PyType_Check(PyTuple_GET_ITEM(calls, C_DECODED)) || !PyFrozenSet_CheckExact(PyTuple_GET_ITEM(calls, C_TIMED))
        || !PyTuple_CheckExact(PyTuple_GET_ITEM(calls, C_TRACKERS))) {
        PyErr_SetString(PyExc_TypeError, "EpochCore: the Decoded type, the TIMED frozenset and a tuple of tracker types expected");
        return NULL;
    }
    Core *s = (Core *)type->tp_alloc(type, 0);
    if (s == NULL) return NULL;
    for (int i = 0; i < NHELP; i++) s->call[i] = Py_NewRef(PyTuple_GET_ITEM(calls, i));
    s->model = Py_NewRef(model);
    s->tod_of = Py_NewRef(Py_None);
    s->gsa_prev_n = -1;
    if (kit_slot_offsets(s->call[C_DECODED], slots, 4, s->off, "EpochCore: %s is not a slot of %R") < 0
        || (s->dict = PyObject_GenericGetDict(model, NULL)) == NULL || !PyDict_CheckExact(s->dict)
        || (s->used = model_attr(s->dict, "_used")) == NULL
        || (s->used_sorted = model_attr(s->dict, "_used_sorted")) == NULL) {
        if (!PyErr_Occurred()) PyErr_SetString(PyExc_TypeError, "EpochCore: the model's __dict__ is not a dict");
        Py_DECREF(s);
        return NULL;
    }
    return (PyObject *)s;
}

static PyObject *get_open(Core *s, void *closure)
{
    (void)closure;
    return PyBool_FromLong(s->open);
}

static PyMethodDef core_methods[] = {
    {"on_sentence", (PyCFunction)(void (*)(void))core_on_sentence, METH_FASTCALL,
     "on_sentence(msg, mono, wall) -> the epochs it completed (usually the shared ())"},
    {"close", (PyCFunction)(void (*)(void))core_close, METH_FASTCALL, "close() -> the open epoch as an Epoch"},
    {NULL, NULL, 0, NULL}};

static PyObject *get_used_reused(Core *s, void *closure)
{
    (void)closure;
    return PyLong_FromUnsignedLongLong(s->used_reused);
}

static PyObject *get_picks_hit(Core *s, void *closure)
{
    (void)closure;
    return PyLong_FromUnsignedLongLong(s->picks_hit);
}

static PyGetSetDef core_getset[] = {
    {"open", (getter)get_open, NULL, "an epoch is being assembled", NULL},
    {"used_reused", (getter)get_used_reused, NULL, "epochs handed the previous epoch's used set (tests)", NULL},
    {"picks_hit", (getter)get_picks_hit, NULL, "solution_gsa answers given by the identity of the pair (tests)", NULL},
    {NULL, NULL, NULL, NULL, NULL}};

PyDoc_STRVAR(core_doc,
"EpochCore(model, helpers)\n\n"
"The C twin of livefix.state.model.StateModel.on_sentence and ._close (wired in by\n"
"livefix.state.model_native.attach): the same epochs, counters, events and object identities.\n"
"helpers: the model module's helpers, in model_native's order; the collaborators are read from the model.");

static PyTypeObject CoreType = {
    PyVarObject_HEAD_INIT(NULL, 0)
    .tp_name = "livefix.state._statecore.EpochCore",
    .tp_basicsize = sizeof(Core),
    .tp_flags = Py_TPFLAGS_DEFAULT | Py_TPFLAGS_HAVE_GC,
    .tp_doc = core_doc,
    .tp_new = core_new,
    .tp_dealloc = (destructor)core_dealloc,
    .tp_traverse = (traverseproc)core_traverse,
    .tp_clear = (inquiry)core_clear,
    .tp_methods = core_methods,
    .tp_getset = core_getset,
};

static struct PyModuleDef MODULE = {PyModuleDef_HEAD_INIT, "livefix.state._statecore",
                                    "The state model's epoch assembly in C (see livefix/state/model.py).", -1,
                                    NULL, NULL, NULL, NULL, NULL};

PyMODINIT_FUNC PyInit__statecore(void)
{
    if (st_line_init() < 0 || st_add_init() < 0 || st_close_init() < 0 || PyType_Ready(&CoreType) < 0) return NULL;
    for (int i = 0; i < 4; i++)
        if ((S_collab[i] = PyUnicode_InternFromString(COLLAB[i])) == NULL) return NULL;
    PyObject *mod = PyModule_Create(&MODULE);
    if (mod == NULL) return NULL;
    if (PyModule_AddObjectRef(mod, "EpochCore", (PyObject *)&CoreType) < 0
        || PyModule_AddIntConstant(mod, "MAX_SENTENCES", MAX_SENTENCES) < 0
        || PyModule_AddIntConstant(mod, "NHELP", NHELP) < 0
        || PyModule_AddObject(mod, "UNTIMED_GAP_S", PyFloat_FromDouble(UNTIMED_GAP_S)) < 0
        || PyModule_AddObject(mod, "HALF_DAY_S", PyFloat_FromDouble(HALF_DAY_S)) < 0
        || PyModule_AddObject(mod, "KNOT_MPS", PyFloat_FromDouble(KNOT_MPS)) < 0) {
        Py_DECREF(mod);
        return NULL;
    }
    return mod;
}
