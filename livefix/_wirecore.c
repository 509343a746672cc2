/* livefix._wirecore: the packed wire of the two-process split (livefix/parallel.py). livefix/wire.py
 * keeps the pickled records (encode() and Replayer.run) as the reference; this is the C twin for the
 * same four Analyzer calls.
 *
 * Why: pickling an epoch as a tuple of its fields, and rebuilding it and its satellites in the child,
 * cost about 3.6 us of the front's and 7 us of the child's CPU per epoch: a fifth of the child's
 * work in a day's report. Here the front copies each field's value into a byte buffer (a tag byte,
 * then 8 raw bytes for a float or int, UTF-8 for a str) and the child builds the same values.
 *
 * What the child gets is what the front recorded, value for value and type for type:
 *  - None, True, False, exact floats (bit for bit: -0.0 and NaN payloads too), exact ints that fit
 *    in 64 bits, exact strs that encode as UTF-8, exact tuples and instances of the item class
 *    (SatObs) travel packed; every other value (a subclass, a big int, an Event, a str with a lone
 *    surrogate) is appended to `others`, a list the caller pickles beside the bytes, and taken from
 *    it in order. A record that is neither an Epoch nor a (kind, args...) tuple of the usual length
 *    goes to `others` whole and the child hands it to the reference replayer.
 *  - Identity where the statistics use it as a shortcut: a tuple field of an epoch that is the very
 *    object the previous epoch had (sats, used_prns, ...) is sent as "same" and the child reuses its
 *    own previous object; an element of a new tuple that is an element of the field's previous
 *    tuple (most satellites, when one constellation's set changed) is sent as its index there. So
 *    consecutive epochs share their tuples exactly as the front's do (the pickled path keeps this
 *    for `sats` with an id table; here it holds for every tuple field and across batches).
 *
 * Safety: the reader checks every length against the bytes left and every index against the list
 * or tuple it names, and nests at most MAX_DEPTH deep; anything else is a ValueError. No Python code
 * runs while the front packs (the values are exact builtins; pickling `others` is the caller's).
 */
#include "_wirecore.h"
#include "_corekit.h" /* kit_slot_class */

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

/* ---- the front: Packer ---- */
typedef struct {
    char *p;
    size_t len, cap;
} Buf;

static int grow(Buf *b, size_t more)
{
    if (b->len + more <= b->cap) return 0;
    size_t cap = b->cap ? b->cap : 4096;
    while (cap < b->len + more) {
        if (cap > ((size_t)PY_SSIZE_T_MAX) / 2) {
            PyErr_NoMemory();
            return -1;
        }
        cap *= 2;
    }
    char *p = PyMem_Realloc(b->p, cap);
    if (p == NULL) {
        PyErr_NoMemory();
        return -1;
    }
    b->p = p;
    b->cap = cap;
    return 0;
}

static inline int buf_put(Buf *b, const void *src, size_t n)
{
    if (b->len + n > b->cap && grow(b, n) < 0) return -1;
    memcpy(b->p + b->len, src, n);
    b->len += n;
    return 0;
}

static inline int buf_u8(Buf *b, unsigned v)
{
    if (b->len + 1 > b->cap && grow(b, 1) < 0) return -1;
    b->p[b->len++] = (char)v;
    return 0;
}

static int buf_u32(Buf *b, uint32_t v) { return buf_put(b, &v, 4); }

typedef struct {
    PyObject_HEAD
    Shape ep, item;
    PyObject *prev[MAX_SLOTS]; /* the last epoch's value of each field when it was a tuple (owned) */
} Packer;

static int pack_value(Packer *s, Buf *b, PyObject *others, PyObject *v, PyObject *refs, int depth);

static int pack_other(Buf *b, PyObject *others, PyObject *v)
{
    if (PyList_Append(others, v) < 0) return -1;
    return buf_u8(b, V_OTHER);
}

/* the elements of an exact tuple; refs: the field's previous tuple (its elements may be named by
 * index) or NULL */
static int pack_tuple(Packer *s, Buf *b, PyObject *others, PyObject *v, PyObject *refs, int depth)
{
    Py_ssize_t n = PyTuple_GET_SIZE(v), pn = refs != NULL ? PyTuple_GET_SIZE(refs) : 0, c = 0;
    if (n > (Py_ssize_t)UINT32_MAX) return pack_other(b, others, v);
    if (buf_u8(b, V_TUPLE) < 0 || buf_u32(b, (uint32_t)n) < 0) return -1;
    for (Py_ssize_t i = 0; i < n; i++) {
        PyObject *e = PyTuple_GET_ITEM(v, i);
        Py_ssize_t at = -1;
        for (Py_ssize_t k = 0; k < WINDOW && c + k < pn; k++)
            if (PyTuple_GET_ITEM(refs, c + k) == e) {
                at = c + k;
                break;
            }
        for (Py_ssize_t j = 0; at < 0 && j < pn; j++)  /* moved further: a scan (new satellites only) */
            if (PyTuple_GET_ITEM(refs, j) == e) at = j;
        if (at >= 0) {
            if (buf_u8(b, V_PREV) < 0 || buf_u32(b, (uint32_t)at) < 0) return -1;
            c = at + 1;
        } else if (pack_value(s, b, others, e, NULL, depth + 1) < 0) {
            return -1;
        }
    }
    return 0;
}

static int pack_value(Packer *s, Buf *b, PyObject *others, PyObject *v, PyObject *refs, int depth)
{
    if (v == Py_None) return buf_u8(b, V_NONE);
    if (v == Py_True) return buf_u8(b, V_TRUE);
    if (v == Py_False) return buf_u8(b, V_FALSE);
    if (PyFloat_CheckExact(v)) {
        double d = PyFloat_AS_DOUBLE(v);
        return buf_u8(b, V_FLOAT) < 0 ? -1 : buf_put(b, &d, 8);
    }
    if (PyLong_CheckExact(v)) {
        int over = 0;
        long long x = PyLong_AsLongLongAndOverflow(v, &over);
        if (x == -1 && PyErr_Occurred()) return -1;
        if (!over) return buf_u8(b, V_INT) < 0 ? -1 : buf_put(b, &x, 8);
        return pack_other(b, others, v);
    }
    if (PyUnicode_CheckExact(v)) {
        Py_ssize_t n;
        const char *u = PyUnicode_AsUTF8AndSize(v, &n);
        if (u == NULL) {
            if (!PyErr_ExceptionMatches(PyExc_UnicodeError)) return -1;
            PyErr_Clear(); /* a lone surrogate: pickled as it is */
            return pack_other(b, others, v);
        }
        if ((size_t)n > UINT32_MAX) return pack_other(b, others, v);
        return buf_u8(b, V_STR) < 0 || buf_u32(b, (uint32_t)n) < 0 ? -1 : buf_put(b, u, (size_t)n);
    }
    if (depth < MAX_DEPTH && PyTuple_CheckExact(v)) return pack_tuple(s, b, others, v, refs, depth);
    if (depth < MAX_DEPTH && Py_IS_TYPE(v, s->item.tp)) {
        if (buf_u8(b, V_ITEM) < 0) return -1;
        for (Py_ssize_t i = 0; i < s->item.n; i++) {
            PyObject *x = SLOT(v, &s->item, i);
            if (x == NULL) {
                PyErr_Format(PyExc_AttributeError, "%s has an unset slot", s->item.tp->tp_name);
                return -1;
            }
            if (pack_value(s, b, others, x, NULL, depth + 1) < 0) return -1;
        }
        return 0;
    }
    return pack_other(b, others, v);
}

static int pack_epoch(Packer *s, Buf *b, PyObject *others, PyObject *ep)
{
    if (buf_u8(b, R_EPOCH) < 0) return -1;
    Py_ssize_t n = s->ep.n;
    for (Py_ssize_t f = 0; f < n; f++) {
        PyObject *v = SLOT(ep, &s->ep, f);
        if (v == NULL) {
            PyErr_Format(PyExc_AttributeError, "%s has an unset slot", s->ep.tp->tp_name);
            return -1;
        }
        if (s->prev[f] != NULL && v == s->prev[f]) {
            if (buf_u8(b, V_SAME) < 0) return -1;
        } else if (pack_value(s, b, others, v, s->prev[f], 0) < 0) {
            return -1;
        }
    }
    for (Py_ssize_t f = 0; f < n; f++) {
        PyObject *v = SLOT(ep, &s->ep, f);
        if (PyTuple_CheckExact(v))
            Py_XSETREF(s->prev[f], Py_NewRef(v));
        else
            Py_CLEAR(s->prev[f]);
    }
    return 0;
}

/* a (kind, args...) record of the usual length: 1 if packed, 0 if not that shape */
static int pack_call(Packer *s, Buf *b, PyObject *others, PyObject *c)
{
    if (!PyTuple_CheckExact(c) || PyTuple_GET_SIZE(c) < 1 || !PyLong_CheckExact(PyTuple_GET_ITEM(c, 0))) return 0;
    long kind = PyLong_AsLong(PyTuple_GET_ITEM(c, 0));
    if (kind == -1 && PyErr_Occurred()) {
        PyErr_Clear();
        return 0;
    }
    if (kind < R_CHUNK || kind > R_EVENT || PyTuple_GET_SIZE(c) != NARGS[kind] + 1) return 0;
    if (buf_u8(b, (unsigned)kind) < 0) return -1;
    for (Py_ssize_t i = 1; i <= NARGS[kind]; i++)
        if (pack_value(s, b, others, PyTuple_GET_ITEM(c, i), NULL, 1) < 0) return -1;
    return 1;
}

PyDoc_STRVAR(pack_doc, "pack(calls) -> (bytes, others): the recorded calls, packed; others: the values that go pickled");

static PyObject *packer_pack(Packer *s, PyObject *calls)
{
    if (!PyList_CheckExact(calls)) {
        PyErr_SetString(PyExc_TypeError, "pack(calls): a list");
        return NULL;
    }
    Buf b = {NULL, 0, 0};
    PyObject *others = PyList_New(0), *out = NULL;
    if (others == NULL) return NULL;
    for (Py_ssize_t i = 0; i < PyList_GET_SIZE(calls); i++) {
        PyObject *c = PyList_GET_ITEM(calls, i);
        int r;
        if (Py_IS_TYPE(c, s->ep.tp)) {
            r = pack_epoch(s, &b, others, c);
        } else {
            r = pack_call(s, &b, others, c);
            if (r == 0) r = buf_u8(&b, R_OTHER) < 0 || PyList_Append(others, c) < 0 ? -1 : 1;
        }
        if (r < 0) goto done;
    }
    {
        PyObject *data = PyBytes_FromStringAndSize(b.p, (Py_ssize_t)b.len);
        if (data != NULL) out = PyTuple_Pack(2, data, others);
        Py_XDECREF(data);
    }
done:
    PyMem_Free(b.p);
    Py_DECREF(others);
    return out;
}

static PyObject *packer_new(PyTypeObject *type, PyObject *args, PyObject *kwds)
{
    PyObject *eps, *items;
    if (!PyArg_ParseTuple(args, "OO:Packer", &eps, &items)) return NULL;
    Packer *s = (Packer *)type->tp_alloc(type, 0);
    if (s == NULL) return NULL;
    if (shape_of(eps, &s->ep) < 0 || shape_of(items, &s->item) < 0) {
        Py_DECREF(s);
        return NULL;
    }
    (void)kwds;
    return (PyObject *)s;
}

static int packer_traverse(Packer *s, visitproc visit, void *arg)
{
    Py_VISIT(s->ep.tp);
    Py_VISIT(s->item.tp);
    for (int i = 0; i < MAX_SLOTS; i++) Py_VISIT(s->prev[i]);
    return 0;
}

static int packer_clear(Packer *s)
{
    Py_CLEAR(s->ep.tp);
    Py_CLEAR(s->item.tp);
    for (int i = 0; i < MAX_SLOTS; i++) Py_CLEAR(s->prev[i]);
    return 0;
}

static void packer_dealloc(Packer *s)
{
    PyObject_GC_UnTrack(s);
    packer_clear(s);
    Py_TYPE(s)->tp_free((PyObject *)s);
}

static PyMethodDef packer_methods[] = {{"pack", (PyCFunction)packer_pack, METH_O, pack_doc}, {NULL, NULL, 0, NULL}};

static PyTypeObject PackerType = {
    PyVarObject_HEAD_INIT(NULL, 0).tp_name = "livefix._wirecore.Packer",
    .tp_basicsize = sizeof(Packer),
    .tp_flags = Py_TPFLAGS_DEFAULT | Py_TPFLAGS_HAVE_GC,
    .tp_doc = "Packer(epoch_slots, item_slots): the front's half of the packed wire.",
    .tp_new = packer_new,
    .tp_traverse = (traverseproc)packer_traverse,
    .tp_clear = (inquiry)packer_clear,
    .tp_dealloc = (destructor)packer_dealloc,
    .tp_methods = packer_methods,
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
