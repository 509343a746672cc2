/* livefix._wirecore, the child's half: Reader, which makes the analyzer calls a packed batch holds
 * (the overview is in _wirecore.c); and what both halves use: the slotted classes' shapes, and the
 * module. Every length is checked against the bytes left, every index
 * against the list or tuple it names; nesting stops at MAX_DEPTH; anything else is a ValueError.
 */
#include "_wirecore.h"

#include "_corekit.h" /* kit_slot_class */

static const char *const METHOD[4] = {"on_chunk", "on_rejected", "on_event", "on_epoch"};

/* The class the slot descriptors name (livefix/_corekit.h, kit_slot_class: make()'s checks) and
 * their offsets, each slot once; 0, or -1 with TypeError. */
int shape_of(PyObject *slots, Shape *sh)
{
    if (!PyTuple_CheckExact(slots) || PyTuple_GET_SIZE(slots) > MAX_SLOTS) {
        PyErr_SetString(PyExc_TypeError, "wire: a tuple of at most 64 slot descriptors");
        return -1;
    }
    PyTypeObject *tp = kit_slot_class(slots, "wire");
    if (tp == NULL) return -1;
    Py_ssize_t n = PyTuple_GET_SIZE(slots);
    for (Py_ssize_t i = 0; i < n; i++) {
        sh->off[i] = ((PyMemberDescrObject *)PyTuple_GET_ITEM(slots, i))->d_member->offset;
        for (Py_ssize_t j = 0; j < i; j++)
            if (sh->off[j] == sh->off[i]) {
                PyErr_Format(PyExc_TypeError, "wire: slot %zd of %s given twice", i, tp->tp_name);
                return -1;
            }
    }
    sh->n = n;
    sh->tp = (PyTypeObject *)Py_NewRef(tp);
    return 0;
}

/* a new instance with every slot set from vals (references stolen, all non-NULL) */
PyObject *shape_new(Shape *sh, PyObject **vals)
{
    PyObject *obj = sh->tp->tp_alloc(sh->tp, 0);
    if (obj == NULL) {
        for (Py_ssize_t i = 0; i < sh->n; i++) Py_DECREF(vals[i]);
        return NULL;
    }
    for (Py_ssize_t i = 0; i < sh->n; i++) SLOT(obj, sh, i) = vals[i];
    return obj;
}


typedef struct {
    PyObject_HEAD
    Shape ep, item;
    PyObject *call[4];    /* the analyzer's on_chunk, on_rejected, on_event, on_epoch (bound once) */
    PyObject *fallback;   /* the reference replayer for a record sent whole: fallback(record) */
    PyObject *prev[MAX_SLOTS]; /* the last epoch's tuple values, as built here (owned) */
} Reader;

typedef struct {
    const unsigned char *p, *end;
    PyObject *others;
    Py_ssize_t next;
} In;

static PyObject *corrupt(const char *what)
{
    PyErr_Format(PyExc_ValueError, "packed batch: %s", what);
    return NULL;
}

static int take(In *in, void *dst, size_t n)
{
    if ((size_t)(in->end - in->p) < n) {
        corrupt("truncated");
        return -1;
    }
    memcpy(dst, in->p, n);
    in->p += n;
    return 0;
}

static int take_u8(In *in, unsigned *v)
{
    unsigned char c;
    if (take(in, &c, 1) < 0) return -1;
    *v = c;
    return 0;
}

static int take_u32(In *in, uint32_t *v) { return take(in, v, 4); }

/* one value; refs: the tuple a V_PREV element names (the field's previous value) or NULL */
static PyObject *read_value(Reader *s, In *in, PyObject *refs, PyObject *elem_refs, int depth)
{
    unsigned tag;
    if (take_u8(in, &tag) < 0) return NULL;
    switch (tag) {
    case V_NONE: Py_RETURN_NONE;
    case V_TRUE: Py_RETURN_TRUE;
    case V_FALSE: Py_RETURN_FALSE;
    case V_FLOAT: {
        double d;
        return take(in, &d, 8) < 0 ? NULL : PyFloat_FromDouble(d);
    }
    case V_INT: {
        long long x;
        return take(in, &x, 8) < 0 ? NULL : PyLong_FromLongLong(x);
    }
    case V_STR: {
        uint32_t n;
        if (take_u32(in, &n) < 0) return NULL;
        if ((size_t)(in->end - in->p) < n) return corrupt("truncated str");
        PyObject *u = PyUnicode_DecodeUTF8((const char *)in->p, (Py_ssize_t)n, "strict");
        in->p += n;
        return u;
    }
    case V_OTHER:
        if (in->next >= PyList_GET_SIZE(in->others)) return corrupt("more pickled values named than sent");
        return Py_NewRef(PyList_GET_ITEM(in->others, in->next++));
    case V_PREV: {
        uint32_t at;
        if (take_u32(in, &at) < 0) return NULL;
        if (refs == NULL || (Py_ssize_t)at >= PyTuple_GET_SIZE(refs)) return corrupt("element of no previous tuple");
        return Py_NewRef(PyTuple_GET_ITEM(refs, at));
    }
    case V_TUPLE: {
        uint32_t n;
        if (depth >= MAX_DEPTH) return corrupt("nested too deep");
        if (take_u32(in, &n) < 0) return NULL;
        if ((size_t)(in->end - in->p) < n) return corrupt("truncated tuple"); /* a byte per element at least */
        PyObject *t = PyTuple_New((Py_ssize_t)n);
        if (t == NULL) return NULL;
        for (uint32_t i = 0; i < n; i++) {
            PyObject *e = read_value(s, in, elem_refs, NULL, depth + 1);
            if (e == NULL) {
                Py_DECREF(t);
                return NULL;
            }
            PyTuple_SET_ITEM(t, i, e);
        }
        return t;
    }
    case V_ITEM: {
        PyObject *vals[MAX_SLOTS];
        if (depth >= MAX_DEPTH) return corrupt("nested too deep");
        for (Py_ssize_t i = 0; i < s->item.n; i++) {
            vals[i] = read_value(s, in, NULL, NULL, depth + 1);
            if (vals[i] == NULL) {
                while (i--) Py_DECREF(vals[i]);
                return NULL;
            }
        }
        return shape_new(&s->item, vals);
    }
    default: return corrupt("unknown value tag");
    }
}

static PyObject *read_epoch(Reader *s, In *in)
{
    PyObject *vals[MAX_SLOTS];
    Py_ssize_t n = s->ep.n, f;
    for (f = 0; f < n; f++) {
        if (in->p < in->end && *in->p == V_SAME) {
            in->p++;
            if (s->prev[f] == NULL) {
                corrupt("same as no previous value");
                break;
            }
            vals[f] = Py_NewRef(s->prev[f]);
        } else if ((vals[f] = read_value(s, in, NULL, s->prev[f], 0)) == NULL) {
            break;
        }
    }
    if (f < n) {
        while (f--) Py_DECREF(vals[f]);
        return NULL;
    }
    for (f = 0; f < n; f++) {
        if (PyTuple_CheckExact(vals[f]))
            Py_XSETREF(s->prev[f], Py_NewRef(vals[f]));
        else
            Py_CLEAR(s->prev[f]);
    }
    return shape_new(&s->ep, vals);
}

/* one record: the analyzer call it stands for; 0, or -1 with an error */
static int read_record(Reader *s, In *in)
{
    unsigned kind;
    PyObject *r = NULL;
    if (take_u8(in, &kind) < 0) return -1;
    if (kind == R_EPOCH) {
        PyObject *ep = read_epoch(s, in);
        if (ep == NULL) return -1;
        r = PyObject_CallOneArg(s->call[R_EPOCH], ep);
        Py_DECREF(ep);
    } else if (kind == R_OTHER) {
        if (in->next >= PyList_GET_SIZE(in->others)) {
            corrupt("more pickled records named than sent");
            return -1;
        }
        PyObject *rec = Py_NewRef(PyList_GET_ITEM(in->others, in->next++));
        r = PyObject_CallOneArg(s->fallback, rec);
        Py_DECREF(rec);
    } else if (kind <= R_EVENT) {
        PyObject *args[3];
        Py_ssize_t n = NARGS[kind], i;
        for (i = 0; i < n; i++)
            if ((args[i] = read_value(s, in, NULL, NULL, 1)) == NULL) break;
        if (i == n) r = PyObject_Vectorcall(s->call[kind], args, (size_t)n, NULL);
        while (i--) Py_DECREF(args[i]);
    } else {
        corrupt("unknown record kind");
    }
    if (r == NULL) return -1;
    Py_DECREF(r);
    return 0;
}

PyDoc_STRVAR(run_doc, "run(data, others): make the analyzer calls the packed batch holds, in order");

static PyObject *reader_run(Reader *s, PyObject *const *args, Py_ssize_t nargs)
{
    if (nargs != 2 || !PyBytes_CheckExact(args[0]) || !PyList_CheckExact(args[1])) {
        PyErr_SetString(PyExc_TypeError, "run(data, others): bytes and a list");
        return NULL;
    }
    PyObject *data = Py_NewRef(args[0]), *others = Py_NewRef(args[1]); /* held while calls run */
    In in = {(const unsigned char *)PyBytes_AS_STRING(data),
             (const unsigned char *)PyBytes_AS_STRING(data) + PyBytes_GET_SIZE(data), others, 0};
    int ok = 1;
    while (ok && in.p < in.end) ok = read_record(s, &in) == 0;
    if (ok && in.next != PyList_GET_SIZE(others)) {
        corrupt("pickled values left over");
        ok = 0;
    }
    Py_DECREF(data);
    Py_DECREF(others);
    if (!ok) return NULL;
    Py_RETURN_NONE;
}

static PyObject *reader_new(PyTypeObject *type, PyObject *args, PyObject *kwds)
{
    PyObject *analyzer, *fallback, *eps, *items;
    if (!PyArg_ParseTuple(args, "OOOO:Reader", &analyzer, &fallback, &eps, &items)) return NULL;
    Reader *s = (Reader *)type->tp_alloc(type, 0);
    if (s == NULL) return NULL;
    (void)kwds;
    if (shape_of(eps, &s->ep) < 0 || shape_of(items, &s->item) < 0) goto fail;
    for (int k = 0; k < 4; k++)
        if ((s->call[k] = PyObject_GetAttrString(analyzer, METHOD[k])) == NULL) goto fail;
    s->fallback = Py_NewRef(fallback);
    return (PyObject *)s;
fail:
    Py_DECREF(s);
    return NULL;
}

static int reader_traverse(Reader *s, visitproc visit, void *arg)
{
    Py_VISIT(s->ep.tp);
    Py_VISIT(s->item.tp);
    Py_VISIT(s->fallback);
    for (int k = 0; k < 4; k++) Py_VISIT(s->call[k]);
    for (int i = 0; i < MAX_SLOTS; i++) Py_VISIT(s->prev[i]);
    return 0;
}

static int reader_clear(Reader *s)
{
    Py_CLEAR(s->ep.tp);
    Py_CLEAR(s->item.tp);
    Py_CLEAR(s->fallback);
    for (int k = 0; k < 4; k++) Py_CLEAR(s->call[k]);
    for (int i = 0; i < MAX_SLOTS; i++) Py_CLEAR(s->prev[i]);
    return 0;
}

static void reader_dealloc(Reader *s)
{
    PyObject_GC_UnTrack(s);
    reader_clear(s);
    Py_TYPE(s)->tp_free((PyObject *)s);
}

static PyMethodDef reader_methods[] = {
    {"run", (PyCFunction)(void (*)(void))reader_run, METH_FASTCALL, run_doc}, {NULL, NULL, 0, NULL}};

PyTypeObject ReaderType = {
    PyVarObject_HEAD_INIT(NULL, 0).tp_name = "livefix._wirecore.Reader",
    .tp_basicsize = sizeof(Reader),
    .tp_flags = Py_TPFLAGS_DEFAULT | Py_TPFLAGS_HAVE_GC,
    .tp_doc = "Reader(analyzer, fallback, epoch_slots, item_slots): the child's half of the packed wire.",
    .tp_new = reader_new,
    .tp_traverse = (traverseproc)reader_traverse,
    .tp_clear = (inquiry)reader_clear,
    .tp_dealloc = (destructor)reader_dealloc,
    .tp_methods = reader_methods,
};

static struct PyModuleDef MODULE = {PyModuleDef_HEAD_INIT, "livefix._wirecore",
                                    "The packed wire of livefix.parallel (C twin of its pickled records).", -1,
                                    NULL, NULL, NULL, NULL, NULL};

PyMODINIT_FUNC PyInit__wirecore(void)
{
    if (PyType_Ready(&PackerType) < 0 || PyType_Ready(&ReaderType) < 0) return NULL;
    PyObject *m = PyModule_Create(&MODULE);
    if (m == NULL) return NULL;
    if (PyModule_AddIntConstant(m, "WIRE_VERSION", WIRE_VERSION) < 0
        || PyModule_AddObjectRef(m, "Packer", (PyObject *)&PackerType) < 0
        || PyModule_AddObjectRef(m, "Reader", (PyObject *)&ReaderType) < 0) {
        Py_DECREF(m);
        return NULL;
    }
    return m;
}
