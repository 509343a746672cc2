/* Value helpers the C cores share (private; static inline, so each module keeps its own copy and
 * exports nothing new). Include after Python.h, by relative path: "../_corekit.h".
 *
 * Each helper is exactly what the cores had inlined before, so the twins' results do not move;
 * where cores differed (a count's bounds, an error message) the difference is a parameter.
 */
#ifndef LIVEFIX_COREKIT_H
#define LIVEFIX_COREKIT_H

#include <Python.h>
#include <stdint.h>
#include <structmember.h>

#define EXACT_INT_MAX 9007199254740992LL /* 2**53: ints up to this convert to double exactly */

/* An exact int within +-EXACT_INT_MAX: 1 and its value as a double, else 0. */
static inline int kit_exact_int(PyObject *v, double *out)
{
    int over = 0;
    long long x = PyLong_AsLongLongAndOverflow(v, &over);
    if (over || x > EXACT_INT_MAX || x < -EXACT_INT_MAX)
        return 0;
    *out = (double)x;
    return 1;
}

/* An exact int that converts to double exactly, or an exact float: 1 and its value, else 0. */
static inline int num_of(PyObject *v, double *out)
{
    if (PyFloat_CheckExact(v)) {
        *out = PyFloat_AS_DOUBLE(v);
        return 1;
    }
    return PyLong_CheckExact(v) && kit_exact_int(v, out);
}

/* An exact int in [lo, hi]: 1 and its value, else 0. */
static inline int kit_count_in(PyObject *v, long long lo, long long hi, long long *out)
{
    if (!PyLong_CheckExact(v))
        return 0;
    int over = 0;
    long long x = PyLong_AsLongLongAndOverflow(v, &over);
    if (over || x > hi || x < lo)
        return 0;
    *out = x;
    return 1;
}

/* list[k] = v (v a new reference, stolen); the callers' old items are floats, ints or None, so
 * dropping one runs no Python code. -1 when v is NULL (no memory). */
static inline int put(PyObject *list, Py_ssize_t k, PyObject *v)
{
    if (v == NULL)
        return -1;
    PyObject *old = PyList_GET_ITEM(list, k);
    PyList_SET_ITEM(list, k, v);
    Py_DECREF(old);
    return 0;
}

static inline int add_float(PyObject *list, Py_ssize_t k, double x)
{
    return put(list, k, PyFloat_FromDouble(PyFloat_AS_DOUBLE(PyList_GET_ITEM(list, k)) + x));
}

static inline int add_one(PyObject *list, Py_ssize_t k)
{
    return put(list, k, PyLong_FromLongLong(PyLong_AsLongLong(PyList_GET_ITEM(list, k)) + 1));
}

/* The slot offsets of names[0..n) in type: 0, or -1 with an error set. A name that is not an
 * object slot raises TypeError(fmt % (name, type)); fmt may leave out the %R. */
static inline int kit_slot_offsets(PyObject *type, const char *const *names, int n, Py_ssize_t *off,
                                   const char *fmt)
{
    for (int f = 0; f < n; f++) {
        PyObject *d = PyObject_GetAttrString(type, names[f]);
        if (d == NULL)
            return -1;
        int ok = Py_TYPE(d) == &PyMemberDescr_Type && ((PyMemberDescrObject *)d)->d_member->type == T_OBJECT_EX;
        if (ok)
            off[f] = ((PyMemberDescrObject *)d)->d_member->offset;
        Py_DECREF(d);
        if (!ok) {
            PyErr_Format(PyExc_TypeError, fmt, names[f], type);
            return -1;
        }
    }
    return 0;
}

/* The class whose slots a tuple of slot descriptors names, when it may be filled slot by slot
 * without its __init__: a heap class on object with object slots only (no other C fields, no
 * __dict__ or __weakref__), and every descriptor one of its writable object slots. Borrowed; NULL
 * with TypeError("<who>: ...") otherwise. A slot named twice is the caller's to refuse. (make() in
 * livefix/_native_make.c checks this on every call, the packed wire once: livefix/_wirecore.c.) */
static inline PyTypeObject *kit_slot_class(PyObject *slots, const char *who)
{
    Py_ssize_t n = PyTuple_GET_SIZE(slots), members = 0, i;
    if (n == 0 || !Py_IS_TYPE(PyTuple_GET_ITEM(slots, 0), &PyMemberDescr_Type)) {
        PyErr_Format(PyExc_TypeError, "%s: one value per slot descriptor", who);
        return NULL;
    }
    PyTypeObject *tp = PyDescr_TYPE(PyTuple_GET_ITEM(slots, 0));
    if (!(tp->tp_flags & Py_TPFLAGS_HEAPTYPE) || tp->tp_base != &PyBaseObject_Type || tp->tp_itemsize != 0
        || tp->tp_dictoffset != 0 || tp->tp_weaklistoffset != 0 || tp->tp_members == NULL
        || tp->tp_basicsize != (Py_ssize_t)(sizeof(PyObject) + n * sizeof(PyObject *))) {
        PyErr_Format(PyExc_TypeError, "%s: a class of __slots__ only, on object", who);
        return NULL;
    }
    while (tp->tp_members[members].name != NULL) members++;
    if (members != n) {
        PyErr_Format(PyExc_TypeError, "%s: %s has %zd slots, %zd given", who, tp->tp_name, members, n);
        return NULL;
    }
    for (i = 0; i < n; i++) {
        PyObject *d = PyTuple_GET_ITEM(slots, i);
        if (!Py_IS_TYPE(d, &PyMemberDescr_Type) || PyDescr_TYPE(d) != tp) break;
        PyMemberDef *m = ((PyMemberDescrObject *)d)->d_member;
        if (m->type != T_OBJECT_EX || (m->flags & READONLY) || m->offset < (Py_ssize_t)sizeof(PyObject)
            || m->offset > tp->tp_basicsize - (Py_ssize_t)sizeof(PyObject *))
            break;
    }
    if (i < n) {
        PyErr_Format(PyExc_TypeError, "%s: slot %zd is not a writable object slot of %s", who, i, tp->tp_name);
        return NULL;
    }
    return tp;
}

/* ---- a dict's modification stamp ---- */

/* The version tag of PEP 509 (CPython 3.11): every insert, delete or value change of d gives it a
 * new, never reused value, so an equal stamp means d still holds what it held. The caches built on
 * it (DecoderFront, EpochCore) keep borrowed pointers to d's values, valid while the stamp is the
 * same. 0: no stamp (3.12 deprecated the field), which turns those caches off. */
static inline uint64_t kit_dict_stamp(PyObject *d)
{
#if PY_VERSION_HEX >= 0x030B0000 && PY_VERSION_HEX < 0x030C0000 && !defined(Py_LIMITED_API)
    return ((PyDictObject *)d)->ma_version_tag;
#else
    (void)d;
    return 0;
#endif
}

/* ---- reading a field mapping (the state cores) ---- */

typedef struct { PyObject *first; int n; } KitSeen;

static inline int kit_seen_visit(PyObject *o, void *arg)
{
    KitSeen *seen = arg;
    if (seen->n++ == 0) seen->first = o;
    return 0;
}

/* The plain dict f reads from when f is one or a read-only view (MappingProxyType) of one, else
 * NULL. Why: the decoder hands out views of plain dicts, whose get() costs two method calls per
 * field. A view's only reference is its mapping (what its tp_traverse visits), and a view's get()
 * is its dict's get(), so reading the dict gives the same values. Anything else: its own get(). */
static inline PyObject *kit_plain_dict(PyObject *f)
{
    if (PyDict_CheckExact(f)) return f;
    if (!Py_IS_TYPE(f, &PyDictProxy_Type) || Py_TYPE(f)->tp_traverse == NULL) return NULL;
    KitSeen seen = {NULL, 0};
    Py_TYPE(f)->tp_traverse(f, kit_seen_visit, &seen);
    return seen.n == 1 && PyDict_CheckExact(seen.first) ? seen.first : NULL;
}

/* f.get(name) or f.get(name, dflt) (dflt NULL: no default given), d = kit_plain_dict(f), get the
 * interned "get"; a new reference */
static inline PyObject *kit_field(PyObject *d, PyObject *f, PyObject *name, PyObject *dflt, PyObject *get)
{
    if (d != NULL) {
        PyObject *v = PyDict_GetItemWithError(d, name);
        if (v == NULL && PyErr_Occurred()) return NULL;
        return Py_NewRef(v != NULL ? v : dflt != NULL ? dflt : Py_None);
    }
    PyObject *args[3] = {f, name, dflt};
    return PyObject_VectorcallMethod(get, args, dflt != NULL ? 3 : 2, NULL);
}

#endif
