/* livefix.state._skycore: the declarations its two source files share (private to the module).
 *
 * _skycore.c holds the Sky type, replace(), expire(), in_view() and the module; _skycore_plan.c the
 * merge and sort of the satellite rows (sky._plan) and obs() / seen(). Shared names carry the sky_
 * prefix and hidden visibility, so the extension exports nothing but its init function.
 */
#ifndef LIVEFIX_SKYCORE_H
#define LIVEFIX_SKYCORE_H

#define PY_SSIZE_T_CLEAN
#include <Python.h>
#include "../_corekit.h"

#if defined(__GNUC__) && !defined(_WIN32)
#define SKY_HIDDEN __attribute__((visibility("hidden")))
#else
#define SKY_HIDDEN
#endif

#define SKY_API 1  /* livefix.state.sky.SKY_API: the constructor's arguments and the methods */

typedef struct {
    PyObject_HEAD
    PyObject *timeout_s;                 /* as given: expire() subtracts it */
    Py_ssize_t max_groups;
    PyObject *satobs, *rank;             /* epoch.SatObs, sky.SYSTEM_ORDER */
    Py_ssize_t off[8];                   /* SatObs's slots, in epoch.SATOBS_FIELDS order */
    PyObject *groups, *monos;            /* group -> satellites, group -> host time; the same key order */
    PyObject *oldest;                    /* at most the oldest listing time */
    /* the groups then their satellite lists (the lists compare by identity): built when asked,
     * dropped on every change; holding the lists keeps their ids unique */
    PyObject *sig;
    PyObject *view_sig, *view;           /* in_view(): its signature and frozenset */
    PyObject *lay_sig, *lay, *lean;      /* obs(): a signature equal to lay[0], (sig, used, plan), its tuple */
    PyObject *seen_lay, *seen_monos, *seen_out;   /* seen(): its layout, the times, the tuple */
    PyObject *order_keys, *order_idx;    /* _plan's satellite keys (a tuple) and their sorted order (a list) */
    PyObject *zero;                      /* 0.0, last_seen_mono of obs() rows */
    int busy;
} Sky;

/* _skycore.c: the groups then their lists, current (borrowed; NULL with an error set) */
SKY_HIDDEN PyObject *sky_signature(Sky *s);
/* two signatures hold the same groups in the same order with the very same lists: 1, 0, -1 */
SKY_HIDDEN int sky_sig_same(PyObject *a, PyObject *b);

/* a SatObs of the 8 field values v[0..8) (what epoch.make_satobs makes of them); new reference */
static inline PyObject *sky_satobs(Sky *s, PyObject *const *v)
{
    PyTypeObject *tp = (PyTypeObject *)s->satobs;
    PyObject *o = tp->tp_alloc(tp, 0);  /* zeroed; the type was checked to have these slots only */
    if (o == NULL) return NULL;
    for (int i = 0; i < 8; i++) *(PyObject **)((char *)o + s->off[i]) = Py_NewRef(v[i]);
    return o;
}

/* _skycore_plan.c */
SKY_HIDDEN PyObject *sky_obs(Sky *s, PyObject *used);
SKY_HIDDEN PyObject *sky_seen(Sky *s, PyObject *used);

/* the truth of Python's `a != b` or `a == b` (no identity shortcut); -1 on error */
static inline int sky_cmp(PyObject *a, PyObject *b, int op)
{
    PyObject *r = PyObject_RichCompare(a, b, op);
    if (r == NULL) return -1;
    int t = PyObject_IsTrue(r);
    Py_DECREF(r);
    return t;
}

/* A group key of exact strs (the GSV assembler's (talker, signal)) is hashed once per replace():
 * hashing it runs no code, so the five look-ups after the first reuse that hash. Any other key is
 * hashed by each dict operation, as Python does. (The known-hash calls are CPython's own, exported
 * up to 3.12; later versions hash each time.) */
#if PY_VERSION_HEX < 0x030D0000
#define SKY_GET(d, k, h) ((h) != -1 ? _PyDict_GetItem_KnownHash(d, k, h) : PyDict_GetItemWithError(d, k))
#define SKY_DEL(d, k, h) ((h) != -1 ? _PyDict_DelItem_KnownHash(d, k, h) : PyDict_DelItem(d, k))
#define SKY_SET(d, k, v, h) ((h) != -1 ? _PyDict_SetItem_KnownHash(d, k, v, h) : PyDict_SetItem(d, k, v))
#else
#define SKY_GET(d, k, h) ((void)(h), PyDict_GetItemWithError(d, k))
#define SKY_DEL(d, k, h) ((void)(h), PyDict_DelItem(d, k))
#define SKY_SET(d, k, v, h) ((void)(h), PyDict_SetItem(d, k, v))
#endif

static inline Py_hash_t sky_plain_hash(PyObject *group)
{
    if (!PyTuple_CheckExact(group)) return -1;
    for (Py_ssize_t i = 0; i < PyTuple_GET_SIZE(group); i++)
        if (!PyUnicode_CheckExact(PyTuple_GET_ITEM(group, i))) return -1;
    return PyObject_Hash(group); /* str tuples: never -1 (CPython maps a hash of -1 to -2) */
}

#endif
