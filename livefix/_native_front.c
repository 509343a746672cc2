/* livefix._native: DecoderFront (the C twin of livefix.decode.decoder.Decoder.decode) and LinePump
 * (the C twin of livefix.pipeline.Pipeline._lines). Both keep no state of their own: they read and
 * write the attributes of the Decoder / Pipeline they serve, in the order the Python reference does,
 * so every later reader (counters, snapshot, the reference itself) sees the same values.
 *
 * What stays in Python: every branch but the hot ones. A line the C parse declines, a non-bytes
 * line, or a decoder whose parse/make callables were swapped goes to the reference method whole;
 * that is exact because nothing was changed before that point (a cache miss and the C parse have
 * no side effects). An exception in the hot branch goes to Decoder._internal as in the reference.
 *
 * Per line the hot branch reads up to eight of the decoder's attributes; it keeps them (borrowed)
 * while the __dict__'s modification stamp stays the same, and builds the Decoded straight from
 * make()'s slot offsets, checked once (see own(), set_attr() and new_decoded()).
 */
#include "_native_front.h"
#include <structmember.h>  /* PyMemberDescrObject: the slots of Decoded */
#include "_corekit.h"

static PyObject *S_internal, *S_GSV, *S_zero, *S_one;

/* ---- DecoderFront ---- */

enum { H_DECODE, H_SLOTS, H_WITH_GSV, H_REPEATING, H_MIN_SHARE, H_NATIVE, H_MAKE, NHELP };

/* the decoder's attributes read here, in the order of NAMES */
enum { A_NATIVE, A_MAKE, A_LINES, A_PENDING, A_CACHE_MAX, A_CACHEABLE, A_GSV_HITS, A_GSV_INS, NATTR };
static const char *const NAMES[NATTR] = {"_native", "_make", "_lines", "_pending", "_cache_max", "_cacheable",
                                         "_gsv_hits", "_gsv_ins"};
static PyObject *S_attr[NATTR];  /* the same, interned */

typedef struct {
    PyObject_HEAD
    PyObject *dec, *dict, *h[NHELP];
    int plain;  /* the decoder's class defines none of the attributes written here: dict writes */
    PyTypeObject *dtype;      /* Decoded, and the offsets of its slots (the helper's, checked once) */
    Py_ssize_t off[4];
    /* What the decoder's __dict__ held (borrowed; NULL: not there) when its stamp was `stamp`: valid
     * while the stamp is the same (livefix/_corekit.h, kit_dict_stamp), which saves a look-up per
     * attribute and line. 0: nothing cached. */
    uint64_t stamp;
    PyObject *at[NATTR];
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
    PyObject *v;
    if (PyDict_CheckExact(d)) {
        v = PyDict_GetItemWithError(d, key);
        v = v != NULL ? Py_NewRef(v) : PyErr_Occurred() ? NULL : Py_NewRef(S_zero);
    } else {
        v = PyObject_CallMethod(d, "get", "OO", key, S_zero);
    }
    if (v == NULL) return -1;
    PyObject *n = PyNumber_Add(v, add);
    Py_DECREF(v);
    if (n == NULL) return -1;
    int rc = PyObject_SetItem(d, key, n);
    Py_DECREF(n);
    return rc;
}

/* The instance dict's entries for NAMES, read again when its stamp moved: 0, or -1 with an error.
 * Caching needs the stamp (no stamp: every read looks up) and only str keys, so that a write of
 * ours (set_attr) runs no Python code (no key's __eq__) and the stamp after it covers it alone. */
static int reload(Front *s)
{
    uint64_t before = kit_dict_stamp(s->dict);
    s->stamp = 0;
    for (int k = 0; k < NATTR; k++) {
        s->at[k] = PyDict_GetItemWithError(s->dict, S_attr[k]);
        if (s->at[k] == NULL && PyErr_Occurred()) return -1;
    }
    Py_ssize_t pos = 0;
    PyObject *key, *val;
    int plain_keys = 1;
    while (plain_keys && PyDict_Next(s->dict, &pos, &key, &val)) plain_keys = PyUnicode_CheckExact(key);
    if (plain_keys && before != 0 && kit_dict_stamp(s->dict) == before) s->stamp = before;
    return 0;
}

/* self.<name> as the instance dict holds it now, borrowed (NULL: not there; *err 1: an error) */
static PyObject *own(Front *s, int k, int *err)
{
    uint64_t now = kit_dict_stamp(s->dict);
    if (now == 0 || now != s->stamp) {
        if (now != 0 && reload(s) < 0) {
            *err = 1;
            return NULL;
        }
        if (s->stamp == 0) {  /* nothing cached: a plain look-up */
            PyObject *v = PyDict_GetItemWithError(s->dict, S_attr[k]);
            *err = v == NULL && PyErr_Occurred();
            return v;
        }
    }
    *err = 0;
    return s->at[k];
}

/* a new reference to self.<name>: from the instance dict, else as Python looks it up (same error) */
static PyObject *attr(Front *s, int k)
{
    int err;
    PyObject *v = own(s, k, &err);
    if (v != NULL) return Py_NewRef(v);
    return err ? NULL : PyObject_GetAttr(s->dec, S_attr[k]);
}

/* self.<name> = v, as Python sets it. The cache stays valid over the write when it was valid
 * before and the old value is an int (its release runs no code): then only this write moved the
 * stamp. */
static int set_attr(Front *s, int k, PyObject *v)
{
    if (!s->plain) return PyObject_SetAttr(s->dec, S_attr[k], v);
    uint64_t before = kit_dict_stamp(s->dict);
    int keep = s->stamp != 0 && before == s->stamp && s->at[k] != NULL && PyLong_CheckExact(s->at[k]);
    int rc = PyDict_SetItem(s->dict, S_attr[k], v);
    if (rc == 0 && keep) {
        s->stamp = kit_dict_stamp(s->dict);
        s->at[k] = v;
    } else {
        s->stamp = 0;
    }
    return rc;
}

/* self.<name> += add */
static int bump_attr(Front *s, int name, PyObject *add)
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

/* a Decoded(talker, msg_id, fields, False) as make(_SLOTS, ...) builds it (its checks passed once,
 * in front_new): without the values tuple */
static PyObject *new_decoded(Front *s, PyObject *talker, PyObject *msg_id, PyObject *fields)
{
    PyObject *obj = s->dtype->tp_alloc(s->dtype, 0), *const vals[4] = {talker, msg_id, fields, Py_False};
    if (obj == NULL) return NULL;
    for (int i = 0; i < 4; i++) *(PyObject **)((char *)obj + s->off[i]) = Py_NewRef(vals[i]);
    return obj;
}

/* the parsed line: info = (header, talker, msg_id) and its fields (both owned here): cache policy,
 * counts, the Decoded */
static PyObject *front_take(Front *s, PyObject *line, PyObject *lines, PyObject *info, PyObject *fields)
{
    PyObject *hdr = PyTuple_GET_ITEM(info, 0), *talker = PyTuple_GET_ITEM(info, 1), *msg_id = PyTuple_GET_ITEM(info, 2);
    PyObject *v = NULL, *gsv = NULL, *pend = NULL, *out = NULL;
    int cached = 0;
    if ((v = attr(s, A_CACHE_MAX)) == NULL || (cached = PyObject_IsTrue(v)) < 0) goto fail;
    Py_CLEAR(v);
    if (cached) {
        if ((v = attr(s, A_CACHEABLE)) == NULL || (cached = PySequence_Contains(v, msg_id)) < 0) goto fail;
        Py_CLEAR(v);
    }
    if (cached) {
        PyObject *n = PyLong_FromSsize_t(PyDict_GET_SIZE(lines)), *cmax = attr(s, A_CACHE_MAX);
        int full = n == NULL || cmax == NULL ? -1 : PyObject_RichCompareBool(n, cmax, Py_GE);
        Py_XDECREF(n);
        Py_XDECREF(cmax);
        if (full < 0) goto fail;
        if (full) {  /* a full cache: keep GSV in it only if repeats paid off since the last refill */
            PyObject *hits = attr(s, A_GSV_HITS), *ins = hits == NULL ? NULL : attr(s, A_GSV_INS);
            PyObject *want = ins == NULL ? NULL : PyNumber_Multiply(s->h[H_MIN_SHARE], ins);
            int ge = want == NULL ? -1 : PyObject_RichCompareBool(hits, want, Py_GE);
            Py_XDECREF(hits);
            Py_XDECREF(ins);
            Py_XDECREF(want);
            if (ge < 0 || set_attr(s, A_CACHEABLE, s->h[ge ? H_WITH_GSV : H_REPEATING]) < 0) goto fail;
            if ((v = PyLong_FromLong(0)) == NULL || set_attr(s, A_GSV_HITS, v) < 0
                || set_attr(s, A_GSV_INS, v) < 0)
                goto fail;
            Py_CLEAR(v);
            PyDict_Clear(lines);
        }
        int is_gsv = PyObject_RichCompareBool(msg_id, S_GSV, Py_EQ);
        if (is_gsv < 0 || (gsv = PyLong_FromLong(is_gsv)) == NULL || bump_attr(s, A_GSV_INS, gsv) < 0) goto fail;
    }
    if ((pend = attr(s, A_PENDING)) == NULL || bump(pend, hdr, S_one) < 0) goto fail;
    if (cached) {  /* a cached value is shared from now on: read-only */
        PyObject *ro = PyDictProxy_New(fields);
        if (ro == NULL) goto fail;
        Py_SETREF(fields, ro);
    }
    if ((out = new_decoded(s, talker, msg_id, fields)) == NULL) goto fail;
    if (cached) {
        PyObject *entry = PyTuple_Pack(3, hdr, out, gsv);
        int rc = entry == NULL ? -1 : PyDict_SetItem(lines, line, entry);
        Py_XDECREF(entry);
        if (rc < 0) goto fail;
    }
    Py_DECREF(fields);
    Py_DECREF(info);
    Py_DECREF(pend);
    Py_XDECREF(gsv);
    return out;
fail:
    Py_XDECREF(out);
    Py_XDECREF(v);
    Py_XDECREF(gsv);
    Py_XDECREF(pend);
    Py_DECREF(fields);
    Py_DECREF(info);
    return front_internal(s, line);
}

PyObject *nat_front_decode(PyObject *self, PyObject *line)
{
    Front *s = (Front *)self;
    int err;
    if (s->dict == NULL) {
        PyErr_SetString(PyExc_RuntimeError, "DecoderFront: cleared");
        return NULL;
    }
    if (!PyBytes_CheckExact(line) || own(s, A_NATIVE, &err) != s->h[H_NATIVE] || own(s, A_MAKE, &err) != s->h[H_MAKE])
        return PyErr_Occurred() ? NULL : front_ref(s, line);
    PyObject *lines = own(s, A_LINES, &err);
    if (lines == NULL || !PyDict_CheckExact(lines)) return err ? NULL : front_ref(s, line);
    Py_INCREF(lines);
    PyObject *hit = PyDict_GetItemWithError(lines, line), *out = NULL;
    if (hit != NULL && PyTuple_CheckExact(hit) && PyTuple_GET_SIZE(hit) == 3) {
        /* the very same line as before: the very same Decoded value */
        Py_INCREF(hit);
        PyObject *pend = attr(s, A_PENDING);
        int ok = pend != NULL && bump(pend, PyTuple_GET_ITEM(hit, 0), S_one) == 0
                 && bump_attr(s, A_GSV_HITS, PyTuple_GET_ITEM(hit, 2)) == 0;
        if (ok) out = Py_NewRef(PyTuple_GET_ITEM(hit, 1));
        Py_XDECREF(pend);
        Py_DECREF(hit);
        Py_DECREF(lines);
        return ok ? out : front_internal(s, line);
    }
    if (hit != NULL || PyErr_Occurred()) {  /* an entry of another shape (never), or an error */
        Py_DECREF(lines);
        return PyErr_Occurred() ? front_internal(s, line) : front_ref(s, line);
    }
    PyObject *info, *fields;
    int r = nat_decode_parts(line, &info, &fields);
    if (r < 0) out = front_internal(s, line);
    else if (r == 0) out = front_ref(s, line);  /* declined: no state changed, the reference decides */
    else out = front_take(s, line, lines, Py_NewRef(info), fields);
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
    const int written[] = {A_CACHEABLE, A_GSV_HITS, A_GSV_INS};
    s->plain = 1;
    for (int i = 0; i < 3; i++) s->plain &= _PyType_Lookup(Py_TYPE(dec), S_attr[written[i]]) == NULL;
    /* make()'s checks of the slots, once: a throwaway Decoded of Nones */
    PyObject *nones = PyTuple_Pack(4, Py_None, Py_None, Py_None, Py_None), *margs[2] = {s->h[H_SLOTS], nones};
    PyObject *probe = nones == NULL ? NULL : nat_make(NULL, margs, 2);
    Py_XDECREF(nones);
    if (probe == NULL) {
        Py_DECREF(s);
        return NULL;
    }
    s->dtype = (PyTypeObject *)Py_NewRef(Py_TYPE(probe));
    Py_DECREF(probe);
    for (int i = 0; i < 4; i++)
        s->off[i] = ((PyMemberDescrObject *)PyTuple_GET_ITEM(s->h[H_SLOTS], i))->d_member->offset;
    return (PyObject *)s;
}

static int front_traverse(Front *s, visitproc visit, void *arg)
{
    Py_VISIT(s->dec);
    Py_VISIT(s->dict);
    Py_VISIT(s->dtype);
    for (int i = 0; i < NHELP; i++) Py_VISIT(s->h[i]);
    return 0;
}

static int front_clear(Front *s)
{
    s->stamp = 0;
    Py_CLEAR(s->dec);
    Py_CLEAR(s->dict);
    Py_CLEAR(s->dtype);
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
    for (int k = 0; k < NATTR; k++) IN(S_attr[k], NAMES[k]);
    IN(S_internal, "_internal"); IN(S_GSV, "GSV");
#undef IN
    /* the shared small ints 0 and 1 */
    if ((S_zero = PyLong_FromLong(0)) == NULL || (S_one = PyLong_FromLong(1)) == NULL) return -1;
    if (PyType_Ready(&nat_front_type) < 0) return -1;
    return PyModule_AddObjectRef(mod, "DecoderFront", (PyObject *)&nat_front_type) < 0 ? -1 : nat_pump_add(mod);
}
