/* livefix._native: DecoderFront (the C twin of livefix.decode.decoder.Decoder.decode) and LinePump
 * (the C twin of livefix.pipeline.Pipeline._lines). Both keep no state of their own: they read and
 * write the attributes of the Decoder / Pipeline they serve, in the order the Python reference does,
 * so every later reader (counters, snapshot, the reference itself) sees the same values.
 *
 * What stays in Python: every branch but the hot ones. A line the C parse declines, a non-bytes
 * line, or a decoder whose parse/make callables were swapped goes to the reference method whole;
 * that is exact because nothing was changed before that point (a cache miss and the C parse have
 * no side effects). An exception in the hot branch goes to Decoder._internal as in the reference.
 */
#include "_native_front.h"

static PyObject *S_lines, *S_pending, *S_cache_max, *S_cacheable, *S_gsv_hits, *S_gsv_ins, *S_native,
    *S_make, *S_internal, *S_GSV, *S_zero;

/* ---- DecoderFront ---- */

enum { H_DECODE, H_SLOTS, H_WITH_GSV, H_REPEATING, H_MIN_SHARE, H_NATIVE, H_MAKE, NHELP };

typedef struct {
    PyObject_HEAD
    PyObject *dec, *dict, *h[NHELP];
    int plain;  /* the decoder's class defines none of the attributes written here: dict writes */
} Front;

/* the reference method for this line: Decoder.decode(dec, line) */
static PyObject *front_ref(Front *s, PyObject *line)
{
    PyObject *args[2] = {s->dec, line};
    return PyObject_Vectorcall(s->h[H_DECODE], args, 2, NULL);
}

/* the reference's `except Exception as err: return self._internal(line, err)` */
static PyObject *front_internal(Front *s, PyObject *line)
{
    if (!PyErr_ExceptionMatches(PyExc_Exception)) return NULL;
    PyObject *tp, *val, *tb;
    PyErr_Fetch(&tp, &val, &tb);
    PyErr_NormalizeException(&tp, &val, &tb);
    if (tb != NULL && val != NULL) PyException_SetTraceback(val, tb);
    PyObject *out = val == NULL ? NULL : PyObject_CallMethodObjArgs(s->dec, S_internal, line, val, NULL);
    Py_XDECREF(tp);
    Py_XDECREF(val);
    Py_XDECREF(tb);
    return out;
}

/* d[key] = d.get(key, 0) + add (add an int object); any mapping as the reference would use it */
static int bump(PyObject *d, PyObject *key, PyObject *add)
{
    PyObject *v, *zero = PyLong_FromLong(0);
    if (zero == NULL) return -1;
    if (PyDict_CheckExact(d)) {
        v = PyDict_GetItemWithError(d, key);
        v = v != NULL ? Py_NewRef(v) : PyErr_Occurred() ? NULL : Py_NewRef(zero);
    } else {
        v = PyObject_CallMethod(d, "get", "OO", key, zero);
    }
    Py_DECREF(zero);
    if (v == NULL) return -1;
    PyObject *n = PyNumber_Add(v, add);
    Py_DECREF(v);
    if (n == NULL) return -1;
    int rc = PyObject_SetItem(d, key, n);
    Py_DECREF(n);
    return rc;
}

/* a new reference to self.<name>: from the instance dict, else as Python looks it up (same error) */
static PyObject *attr(Front *s, PyObject *name)
{
    PyObject *v = PyDict_GetItemWithError(s->dict, name);
    if (v != NULL) return Py_NewRef(v);
    return PyErr_Occurred() ? NULL : PyObject_GetAttr(s->dec, name);
}

/* self.<name> = v, as Python sets it */
static int set_attr(Front *s, PyObject *name, PyObject *v)
{
    return s->plain ? PyDict_SetItem(s->dict, name, v) : PyObject_SetAttr(s->dec, name, v);
}

/* self.<name> += add */
static int bump_attr(Front *s, PyObject *name, PyObject *add)
{
    PyObject *v = attr(s, name);
    if (v == NULL) return -1;
    /* int += 0 leaves an equal int: skip the write (the hit path of GSA and VTG lines) */
    if (s->plain && PyLong_CheckExact(v) && add == S_zero) {
        Py_DECREF(v);
        return 0;
    }
    PyObject *n = PyNumber_InPlaceAdd(v, add);
    Py_DECREF(v);
    if (n == NULL) return -1;
    int rc = set_attr(s, name, n);
    Py_DECREF(n);
    return rc;
}

/* the parsed line r = ((header, talker, msg_id), fields): cache policy, counts, the Decoded */
static PyObject *front_take(Front *s, PyObject *line, PyObject *lines, PyObject *r)
{
    PyObject *hit = PyTuple_GET_ITEM(r, 0), *fields = PyTuple_GET_ITEM(r, 1);
    PyObject *hdr = PyTuple_GET_ITEM(hit, 0), *talker = PyTuple_GET_ITEM(hit, 1), *msg_id = PyTuple_GET_ITEM(hit, 2);
    PyObject *v = NULL, *gsv = NULL, *pend = NULL, *out = NULL, *vals = NULL;
    int cached = 0;
    Py_INCREF(fields);
    if ((v = attr(s, S_cache_max)) == NULL || (cached = PyObject_IsTrue(v)) < 0) goto fail;
    Py_CLEAR(v);
    if (cached) {
        if ((v = attr(s, S_cacheable)) == NULL || (cached = PySequence_Contains(v, msg_id)) < 0) goto fail;
        Py_CLEAR(v);
    }
    if (cached) {
        PyObject *n = PyLong_FromSsize_t(PyDict_GET_SIZE(lines)), *cmax = attr(s, S_cache_max);
        int full = n == NULL || cmax == NULL ? -1 : PyObject_RichCompareBool(n, cmax, Py_GE);
        Py_XDECREF(n);
        Py_XDECREF(cmax);
        if (full < 0) goto fail;
        if (full) {  /* a full cache: keep GSV in it only if repeats paid off since the last refill */
            PyObject *hits = attr(s, S_gsv_hits), *ins = hits == NULL ? NULL : attr(s, S_gsv_ins);
            PyObject *want = ins == NULL ? NULL : PyNumber_Multiply(s->h[H_MIN_SHARE], ins);
            int ge = want == NULL ? -1 : PyObject_RichCompareBool(hits, want, Py_GE);
            Py_XDECREF(hits);
            Py_XDECREF(ins);
            Py_XDECREF(want);
            if (ge < 0 || set_attr(s, S_cacheable, s->h[ge ? H_WITH_GSV : H_REPEATING]) < 0) goto fail;
            if ((v = PyLong_FromLong(0)) == NULL || set_attr(s, S_gsv_hits, v) < 0
                || set_attr(s, S_gsv_ins, v) < 0)
                goto fail;
            Py_CLEAR(v);
            PyDict_Clear(lines);
        }
        int is_gsv = PyObject_RichCompareBool(msg_id, S_GSV, Py_EQ);
        if (is_gsv < 0 || (gsv = PyLong_FromLong(is_gsv)) == NULL || bump_attr(s, S_gsv_ins, gsv) < 0) goto fail;
    }
    if ((pend = attr(s, S_pending)) == NULL || (v = PyLong_FromLong(1)) == NULL) goto fail;
    if (bump(pend, hdr, v) < 0) goto fail;
    Py_CLEAR(v);
    if (cached) {  /* a cached value is shared from now on: read-only */
        PyObject *ro = PyDictProxy_New(fields);
        if (ro == NULL) goto fail;
        Py_SETREF(fields, ro);
    }
    if ((vals = PyTuple_Pack(4, talker, msg_id, fields, Py_False)) == NULL) goto fail;
    PyObject *margs[2] = {s->h[H_SLOTS], vals};
    if ((out = nat_make(NULL, margs, 2)) == NULL) goto fail;
    if (cached) {
        PyObject *entry = PyTuple_Pack(3, hdr, out, gsv);
        int rc = entry == NULL ? -1 : PyDict_SetItem(lines, line, entry);
        Py_XDECREF(entry);
        if (rc < 0) goto fail;
    }
    Py_DECREF(fields);
    Py_DECREF(pend);
    Py_XDECREF(gsv);
    Py_DECREF(vals);
    return out;
fail:
    Py_XDECREF(out);
    Py_XDECREF(v);
    Py_XDECREF(gsv);
    Py_XDECREF(pend);
    Py_XDECREF(vals);
    Py_DECREF(fields);
    return front_internal(s, line);
}

PyObject *nat_front_decode(PyObject *self, PyObject *line)
{
    Front *s = (Front *)self;
    PyObject *dict = s->dict;
    if (!PyBytes_CheckExact(line) || PyDict_GetItemWithError(dict, S_native) != s->h[H_NATIVE]
        || PyDict_GetItemWithError(dict, S_make) != s->h[H_MAKE])
        return PyErr_Occurred() ? NULL : front_ref(s, line);
    PyObject *lines = PyDict_GetItemWithError(dict, S_lines);
    if (lines == NULL || !PyDict_CheckExact(lines)) return PyErr_Occurred() ? NULL : front_ref(s, line);
    Py_INCREF(lines);
    PyObject *hit = PyDict_GetItemWithError(lines, line), *out = NULL;
    if (hit != NULL && PyTuple_CheckExact(hit) && PyTuple_GET_SIZE(hit) == 3) {
        /* the very same line as before: the very same Decoded value */
        Py_INCREF(hit);
        PyObject *pend = attr(s, S_pending), *one = PyLong_FromLong(1);
        int ok = pend != NULL && one != NULL && bump(pend, PyTuple_GET_ITEM(hit, 0), one) == 0
                 && bump_attr(s, S_gsv_hits, PyTuple_GET_ITEM(hit, 2)) == 0;
        if (ok) out = Py_NewRef(PyTuple_GET_ITEM(hit, 1));
        Py_XDECREF(pend);
        Py_XDECREF(one);
        Py_DECREF(hit);
        Py_DECREF(lines);
        return ok ? out : front_internal(s, line);
    }
    if (hit != NULL || PyErr_Occurred()) {  /* an entry of another shape (never), or an error */
        Py_DECREF(lines);
        return PyErr_Occurred() ? front_internal(s, line) : front_ref(s, line);
    }
    PyObject *r = nat_decode(NULL, line);
    if (r == NULL) out = front_internal(s, line);
    else if (r == Py_None) out = front_ref(s, line);  /* declined: no state changed, the reference decides */
    else out = front_take(s, line, lines, r);
    Py_XDECREF(r);
    Py_DECREF(lines);
    return out;
}

static PyObject *front_new(PyTypeObject *type, PyObject *args, PyObject *kwds)
{
    static char *names[] = {"decoder", "helpers", NULL};
    PyObject *dec, *helpers;
    if (!PyArg_ParseTupleAndKeywords(args, kwds, "OO!:DecoderFront", names, &dec, &PyTuple_Type, &helpers))
        return NULL;
    if (PyTuple_GET_SIZE(helpers) != NHELP || !PyTuple_CheckExact(PyTuple_GET_ITEM(helpers, H_SLOTS))) {
        PyErr_Format(PyExc_TypeError, "DecoderFront: %d helpers (the slots a tuple)", NHELP);
        return NULL;
    }
    Front *s = (Front *)type->tp_alloc(type, 0);
    if (s == NULL) return NULL;
    for (int i = 0; i < NHELP; i++) s->h[i] = Py_NewRef(PyTuple_GET_ITEM(helpers, i));
    s->dec = Py_NewRef(dec);
    if ((s->dict = PyObject_GenericGetDict(dec, NULL)) == NULL || !PyDict_CheckExact(s->dict)) {
        if (!PyErr_Occurred()) PyErr_SetString(PyExc_TypeError, "DecoderFront: the decoder's __dict__ is not a dict");
        Py_DECREF(s);
        return NULL;
    }
    PyObject *const written[] = {S_cacheable, S_gsv_hits, S_gsv_ins};
    s->plain = 1;
    for (int i = 0; i < 3; i++) s->plain &= _PyType_Lookup(Py_TYPE(dec), written[i]) == NULL;
    return (PyObject *)s;
}

static int front_traverse(Front *s, visitproc visit, void *arg)
{
    Py_VISIT(s->dec);
    Py_VISIT(s->dict);
    for (int i = 0; i < NHELP; i++) Py_VISIT(s->h[i]);
    return 0;
}

static int front_clear(Front *s)
{
    Py_CLEAR(s->dec);
    Py_CLEAR(s->dict);
    for (int i = 0; i < NHELP; i++) Py_CLEAR(s->h[i]);
    return 0;
}

static void front_dealloc(Front *s)
{
    PyObject_GC_UnTrack(s);
    front_clear(s);
    Py_TYPE(s)->tp_free((PyObject *)s);
}

static PyMethodDef front_methods[] = {
    {"decode", nat_front_decode, METH_O, "decode(line) -> Decoded | Rejected (Decoder.decode's twin)"},
    {NULL, NULL, 0, NULL}};

PyTypeObject nat_front_type = {
    PyVarObject_HEAD_INIT(NULL, 0)
    .tp_name = "livefix._native.DecoderFront",
    .tp_basicsize = sizeof(Front),
    .tp_flags = Py_TPFLAGS_DEFAULT | Py_TPFLAGS_HAVE_GC,
    .tp_doc = "DecoderFront(decoder, helpers): the C twin of Decoder.decode over the decoder's attributes\n"
              "(wired in by livefix.decode.decoder; helpers in its order).",
    .tp_new = front_new,
    .tp_dealloc = (destructor)front_dealloc,
    .tp_traverse = (traverseproc)front_traverse,
    .tp_clear = (inquiry)front_clear,
    .tp_methods = front_methods,
};

int nat_front_add(PyObject *mod)
{
#define IN(var, text) if ((var = PyUnicode_InternFromString(text)) == NULL) return -1
    IN(S_lines, "_lines"); IN(S_pending, "_pending"); IN(S_cache_max, "_cache_max");
    IN(S_cacheable, "_cacheable"); IN(S_gsv_hits, "_gsv_hits"); IN(S_gsv_ins, "_gsv_ins");
    IN(S_native, "_native"); IN(S_make, "_make"); IN(S_internal, "_internal"); IN(S_GSV, "GSV");
#undef IN
    if ((S_zero = PyLong_FromLong(0)) == NULL) return -1;  /* the shared small int 0 */
    if (PyType_Ready(&nat_front_type) < 0) return -1;
    return PyModule_AddObjectRef(mod, "DecoderFront", (PyObject *)&nat_front_type) < 0 ? -1 : nat_pump_add(mod);
}
