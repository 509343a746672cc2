/* livefix.state._gsvcore: the GSV set assembler of livefix/state/gsv.py (GsvAssembler) in C.
 *
 * Why: GSV lines are the most frequent sentences of a multi-constellation receiver (several sets of
 * several parts per epoch), and the Python assembler spends about a microsecond per line even when
 * the line was seen before. The pure-Python class stays the reference: this twin takes the same
 * branches in the same order, keeps the same memos with the same caps and clearing, and hands back
 * the very same list object while a set repeats (livefix.state.sky skips work by that identity).
 * tests/state/test_gsv_native.py compares every add() of the two. The satellite numbering
 * (livefix.state.prn) is not duplicated: a part never seen before goes to the Python function
 * passed in (gsv._part_sats).
 *
 * What is held: the parts of unfinished sets (at most MAX_GROUPS, each at most MAX_PARTS parts),
 * the last complete set per group (a dict, cleared past MAX_GROUPS), the part memo by value (a
 * dict) and by identity of read-only field mappings (an open-addressing table keyed by the
 * mapping's address, holding the mapping so the address stays unique); both memos clear past
 * MEMO_MAX entries, as in the Python class.
 *
 * The module's files: this one (the GsvAssembler type and the module), _gsvcore_add.c (add() and
 * the reading of a part), _gsvcore_sets.c (ending a set), _gsvcore_store.c (unfinished sets, the
 * identity memo) and their private header _gsvcore.h.
 */
#include "_gsvcore.h"
#include <structmember.h>

PyDoc_STRVAR(add_doc,
"add(talker, fields) -> (group key, satellites of a set that ended now or None, incomplete sets counted now)");

static PyObject *asm_add(Asm *s, PyObject *const *args, Py_ssize_t nargs)
{
    if (nargs != 2) {
        PyErr_Format(PyExc_TypeError, "add() takes 2 arguments (%zd given)", nargs);
        return NULL;
    }
    if (s->busy || s->last == NULL) {  /* a comparison or get() calling back in; or after tp_clear */
        PyErr_SetString(PyExc_RuntimeError, s->busy ? "GsvAssembler.add() called re-entrantly"
                                                    : "GsvAssembler.add() on a cleared assembler");
        return NULL;
    }
    s->busy = 1;
    PyObject *r = gsv_add(s, args[0], args[1]);
    s->busy = 0;
    return r;
}

/* ---- the type ---- */

static int asm_traverse(Asm *s, visitproc visit, void *arg)
{
    Py_VISIT(s->last_unknown);
    Py_VISIT(s->part_sats);
    Py_VISIT(s->systems);
    Py_VISIT(s->by_value);
    Py_VISIT(s->last);
    for (int i = 0; i < s->npending; i++) {
        Partial *p = s->pending[i];
        Py_VISIT(p->key);
        Py_VISIT(p->total);
        for (int k = 0; k < p->num_msg; k++) Py_VISIT(p->parts[k]);
    }
    for (size_t i = 0; s->memo != NULL && i < s->memo_cap; i++) {
        if (s->memo[i].f == NULL) continue;
        Py_VISIT(s->memo[i].f);
        Py_VISIT(s->memo[i].key);
        Py_VISIT(s->memo[i].total);
        Py_VISIT(s->memo[i].hit);
    }
    return 0;
}

static int asm_clear(Asm *s)
{
    while (s->npending > 0) gsv_partial_free(gsv_pending_take(s, s->npending - 1));
    gsv_memo_clear(s);
    Py_CLEAR(s->last_unknown);
    Py_CLEAR(s->part_sats);
    Py_CLEAR(s->systems);
    Py_CLEAR(s->by_value);
    Py_CLEAR(s->last);
    return 0;
}

static void asm_dealloc(Asm *s)
{
    PyObject_GC_UnTrack(s);
    asm_clear(s);
    Py_TYPE(s)->tp_free((PyObject *)s);
}

static PyObject *asm_new(PyTypeObject *type, PyObject *args, PyObject *kwds)
{
    static char *names[] = {"part_sats", "talker_system", NULL};
    PyObject *part_sats, *systems;
    if (!PyArg_ParseTupleAndKeywords(args, kwds, "OO!:GsvAssembler", names, &part_sats, &PyDict_Type, &systems))
        return NULL;
    if (!PyCallable_Check(part_sats)) {
        PyErr_SetString(PyExc_TypeError, "GsvAssembler: part_sats must be callable");
        return NULL;
    }
    Asm *s = (Asm *)type->tp_alloc(type, 0);
    if (s == NULL) return NULL;
    s->last_unknown = Py_NewRef(gsv_empty_tuple);
    s->part_sats = Py_NewRef(part_sats);
    s->systems = Py_NewRef(systems);
    if ((s->by_value = PyDict_New()) == NULL || (s->last = PyDict_New()) == NULL) {
        Py_DECREF(s);
        return NULL;
    }
    return (PyObject *)s;
}

static PyObject *asm_pending(Asm *s, void *closure)
{
    (void)closure;
    PyObject *out = PyDict_New();
    for (int i = 0; out != NULL && i < s->npending; i++) {
        Partial *p = s->pending[i];
        PyObject *v = Py_BuildValue("(iii)", p->num_msg, p->next_msg, p->missing);
        if (v == NULL || PyDict_SetItem(out, p->key, v) < 0) Py_CLEAR(out);
        Py_XDECREF(v);
    }
    return out;
}

static PyMethodDef asm_methods[] = {
    {"add", (PyCFunction)(void (*)(void))asm_add, METH_FASTCALL, add_doc},
    {NULL, NULL, 0, NULL}};

static PyMemberDef asm_members[] = {
    {"broken", T_PYSSIZET, offsetof(Asm, broken), 0, "incomplete sets + unreadable parts"},
    {"unmapped", T_PYSSIZET, offsetof(Asm, unmapped), 0, "listed numbers outside every known block"},
    {"last_unknown", T_OBJECT, offsetof(Asm, last_unknown), READONLY, "such numbers in the part just added"},
    {NULL, 0, 0, 0, NULL}};

static PyGetSetDef asm_getset[] = {
    {"_pending", (getter)asm_pending, NULL, "unfinished sets: {key: (numMsg, next part, missing)}, a copy", NULL},
    {NULL, NULL, NULL, NULL, NULL}};

PyDoc_STRVAR(asm_doc,
"GsvAssembler(part_sats, talker_system)\n\n"
"The C twin of livefix.state.gsv.GsvAssembler (use livefix.state.gsv.make_assembler()): the same\n"
"add() results, counters and list identities. part_sats is gsv._part_sats, talker_system\n"
"livefix.state.epoch.TALKER_SYSTEM.");

static PyTypeObject AsmType = {
    PyVarObject_HEAD_INIT(NULL, 0)
    .tp_name = "livefix.state._gsvcore.GsvAssembler",
    .tp_basicsize = sizeof(Asm),
    .tp_flags = Py_TPFLAGS_DEFAULT | Py_TPFLAGS_HAVE_GC,
    .tp_doc = asm_doc,
    .tp_new = asm_new,
    .tp_dealloc = (destructor)asm_dealloc,
    .tp_traverse = (traverseproc)asm_traverse,
    .tp_clear = (inquiry)asm_clear,
    .tp_methods = asm_methods,
    .tp_members = asm_members,
    .tp_getset = asm_getset,
};

static struct PyModuleDef MODULE = {PyModuleDef_HEAD_INIT, "livefix.state._gsvcore",
                                    "GSV set assembly in C (see livefix/state/gsv.py).", -1, NULL,
                                    NULL, NULL, NULL, NULL};

PyMODINIT_FUNC PyInit__gsvcore(void)
{
    if (gsv_add_init() < 0) return NULL;
    if (PyType_Ready(&AsmType) < 0) return NULL;
    PyObject *groups = PyLong_FromLong(MAX_GROUPS);
    int bad = groups == NULL || PyDict_SetItemString(AsmType.tp_dict, "MAX_GROUPS", groups) < 0;
    Py_XDECREF(groups);
    if (bad) return NULL;
    PyType_Modified(&AsmType);
    PyObject *mod = PyModule_Create(&MODULE);
    if (mod == NULL) return NULL;
    if (PyModule_AddObjectRef(mod, "GsvAssembler", (PyObject *)&AsmType) < 0
        || PyModule_AddIntConstant(mod, "MAX_PARTS", MAX_PARTS) < 0
        || PyModule_AddIntConstant(mod, "MEMO_MAX", MEMO_MAX) < 0
        || PyModule_AddIntConstant(mod, "MAX_GROUPS", MAX_GROUPS) < 0 || gsv_parts_add(mod) < 0) {
        Py_DECREF(mod);
        return NULL;
    }
    return mod;
}
