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
    /* As a sink (the Analyzer's four feeding methods): the calls packed as they come, until take().
     * full() is called when an on_epoch brings the epochs to `batch` (0: never). A call that cannot
     * be packed is dropped and its error kept for take(), as the pickled path meets it at flush;
     * the stream then starts again with no previous epoch (a new Reader on the other side). */
    Buf acc;
    PyObject *acc_others, *full, *err_type, *err_value, *err_tb;
    Py_ssize_t epochs, batch;
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

/* ---- the sink ---- */

/* one call into the sink: a record of `kind` with its arguments, or (kind R_EPOCH) an epoch */
static PyObject *sink_record(Packer *s, int kind, PyObject *const *args, Py_ssize_t nargs, Py_ssize_t want,
                             const char *name)
{
    if (nargs != want) {
        PyErr_Format(PyExc_TypeError, "%s() takes %zd arguments (%zd given)", name, want, nargs);
        return NULL;
    }
    size_t mark = s->acc.len;
    Py_ssize_t omark = PyList_GET_SIZE(s->acc_others);
    int r = 0;
    if (s->err_type != NULL) {
        r = 0; /* the batch is lost already: take() raises */
    } else if (kind == R_EPOCH && Py_IS_TYPE(args[0], s->ep.tp)) {
        r = pack_epoch(s, &s->acc, s->acc_others, args[0]);
    } else if (kind == R_EPOCH) { /* not an Epoch: sent whole, as the pickled path does */
        r = buf_u8(&s->acc, R_OTHER) < 0 || PyList_Append(s->acc_others, args[0]) < 0 ? -1 : 0;
    } else {
        r = buf_u8(&s->acc, (unsigned)kind);
        for (Py_ssize_t i = 0; r == 0 && i < nargs; i++) r = pack_value(s, &s->acc, s->acc_others, args[i], NULL, 1);
    }
    if (r < 0) {
        s->acc.len = mark;
        PyErr_Fetch(&s->err_type, &s->err_value, &s->err_tb);
        PyErr_NormalizeException(&s->err_type, &s->err_value, &s->err_tb);
        if (PyList_SetSlice(s->acc_others, omark, PyList_GET_SIZE(s->acc_others), NULL) < 0) return NULL;
    }
    if (kind == R_EPOCH && ++s->epochs >= s->batch && s->batch > 0 && s->full != NULL)
        return PyObject_CallNoArgs(s->full);
    Py_RETURN_NONE;
}

static PyObject *sink_chunk(Packer *s, PyObject *const *args, Py_ssize_t nargs)
{
    return sink_record(s, R_CHUNK, args, nargs, 3, "on_chunk");
}

static PyObject *sink_rejected(Packer *s, PyObject *const *args, Py_ssize_t nargs)
{
    return sink_record(s, R_REJECTED, args, nargs, 3, "on_rejected");
}

static PyObject *sink_event(Packer *s, PyObject *ev) { return sink_record(s, R_EVENT, &ev, 1, 1, "on_event"); }

static PyObject *sink_epoch(Packer *s, PyObject *ep) { return sink_record(s, R_EPOCH, &ep, 1, 1, "on_epoch"); }

PyDoc_STRVAR(take_doc, "take() -> (bytes, others): the calls since the last take, packed (the kept error, if any)");

static PyObject *sink_take(Packer *s, PyObject *unused)
{
    (void)unused;
    if (s->err_type != NULL) { /* the batch is lost: what follows must not lean on its epochs */
        s->acc.len = 0;
        s->epochs = 0;
        for (int i = 0; i < MAX_SLOTS; i++) Py_CLEAR(s->prev[i]);
        PyErr_Restore(s->err_type, s->err_value, s->err_tb); /* references handed over */
        s->err_type = s->err_value = s->err_tb = NULL;
        Py_SETREF(s->acc_others, PyList_New(0));
        return NULL;
    }
    PyObject *fresh = PyList_New(0), *data = NULL, *out = NULL;
    if (fresh != NULL) data = PyBytes_FromStringAndSize(s->acc.p, (Py_ssize_t)s->acc.len);
    if (data != NULL) out = PyTuple_Pack(2, data, s->acc_others);
    Py_XDECREF(data);
    if (out == NULL) {
        Py_XDECREF(fresh);
        return NULL;
    }
    Py_SETREF(s->acc_others, fresh);
    s->acc.len = 0;
    s->epochs = 0;
    return out;
}

static PyObject *sink_pending(Packer *s, void *closure)
{
    (void)closure;
    return PyBool_FromLong(s->acc.len > 0 || s->err_type != NULL);
}

static PyObject *packer_new(PyTypeObject *type, PyObject *args, PyObject *kwds)
{
    PyObject *eps, *items, *full = Py_None;
    Py_ssize_t batch = 0;
    if (!PyArg_ParseTuple(args, "OO|nO:Packer", &eps, &items, &batch, &full)) return NULL;
    Packer *s = (Packer *)type->tp_alloc(type, 0);
    if (s == NULL) return NULL;
    if (shape_of(eps, &s->ep) < 0 || shape_of(items, &s->item) < 0 || (s->acc_others = PyList_New(0)) == NULL) {
        Py_DECREF(s);
        return NULL;
    }
    s->batch = batch;
    s->full = full == Py_None ? NULL : Py_NewRef(full);
    (void)kwds;
    return (PyObject *)s;
}

static int packer_traverse(Packer *s, visitproc visit, void *arg)
{
    Py_VISIT(s->ep.tp);
    Py_VISIT(s->item.tp);
    for (int i = 0; i < MAX_SLOTS; i++) Py_VISIT(s->prev[i]);
    Py_VISIT(s->acc_others);
    Py_VISIT(s->full);
    Py_VISIT(s->err_type);
    Py_VISIT(s->err_value);
    Py_VISIT(s->err_tb);
    return 0;
}

static int packer_clear(Packer *s)
{
    Py_CLEAR(s->ep.tp);
    Py_CLEAR(s->item.tp);
    for (int i = 0; i < MAX_SLOTS; i++) Py_CLEAR(s->prev[i]);
    Py_CLEAR(s->acc_others);
    Py_CLEAR(s->full);
    Py_CLEAR(s->err_type);
    Py_CLEAR(s->err_value);
    Py_CLEAR(s->err_tb);
    return 0;
}

static void packer_dealloc(Packer *s)
{
    PyObject_GC_UnTrack(s);
    packer_clear(s);
    PyMem_Free(s->acc.p);
    Py_TYPE(s)->tp_free((PyObject *)s);
}

#define FAST(f) (PyCFunction)(void (*)(void))(f)
static PyMethodDef packer_methods[] = {
    {"pack", (PyCFunction)packer_pack, METH_O, pack_doc},
    {"on_chunk", FAST(sink_chunk), METH_FASTCALL, "on_chunk(mono, wall, nbytes): packed into the sink"},
    {"on_rejected", FAST(sink_rejected), METH_FASTCALL, "on_rejected(reason, mono, wall): packed into the sink"},
    {"on_event", (PyCFunction)sink_event, METH_O, "on_event(ev): packed into the sink"},
    {"on_epoch", (PyCFunction)sink_epoch, METH_O, "on_epoch(ep): packed into the sink; full() at `batch` epochs"},
    {"take", (PyCFunction)sink_take, METH_NOARGS, take_doc},
    {NULL, NULL, 0, NULL}};

static PyGetSetDef packer_getset[] = {
    {"pending", (getter)sink_pending, NULL, "whether take() has anything (calls, or a kept error)", NULL},
    {NULL, NULL, NULL, NULL, NULL}};

PyTypeObject PackerType = {
    PyVarObject_HEAD_INIT(NULL, 0).tp_name = "livefix._wirecore.Packer",
    .tp_basicsize = sizeof(Packer),
    .tp_flags = Py_TPFLAGS_DEFAULT | Py_TPFLAGS_HAVE_GC,
    .tp_doc = "Packer(epoch_slots, item_slots, batch=0, full=None): the front's half of the packed wire.",
    .tp_new = packer_new,
    .tp_traverse = (traverseproc)packer_traverse,
    .tp_clear = (inquiry)packer_clear,
    .tp_dealloc = (destructor)packer_dealloc,
    .tp_methods = packer_methods,
    .tp_getset = packer_getset,
};

