/* livefix.analysis._epochcore: what _epochcore_pos.c (PositionStats.on_epoch) and _epochcore_motion.c
 * (MotionDetector.update) share; private to those two files. */
#ifndef LIVEFIX_EPOCHCORE_POS_H
#define LIVEFIX_EPOCHCORE_POS_H

#include "_epochcore.h"

/* MotionDetector's type, collections.deque, math.hypot and motion.CONFIRM: 0, or -1 with an error set */
EP_HIDDEN int ep_motion_configure(PyObject *type, PyObject *deque, PyObject *hypot, long long confirm);
/* MotionDetector.update(t, e, n, speed) with t, e, n exact floats: 0/1 (its answer's truth), -1 with an error */
EP_HIDDEN int ep_motion_update(PyObject *md, PyObject *t, PyObject *e, PyObject *n, PyObject *speed);

/* o's slot at off (a new reference), or NULL when unset */
static inline PyObject *sget(PyObject *o, Py_ssize_t off)
{
    return Py_XNewRef(slot(o, off));
}

/* o's slot at off = v (v stolen): -1 with MemoryError when v is NULL. The old values are numbers,
 * bools, None or tuples of them, so dropping one runs no Python code. */
static inline int sset(PyObject *o, Py_ssize_t off, PyObject *v)
{
    if (v == NULL)
        return -1;
    PyObject **p = (PyObject **)((char *)o + off), *old = *p;
    *p = v;
    Py_XDECREF(old);
    return 0;
}

static inline int fl(PyObject *v) /* an exact float (v may be NULL) */
{
    return v != NULL && PyFloat_CheckExact(v);
}

static inline int is_float(PyObject *v, double *out)
{
    if (v == NULL || !PyFloat_CheckExact(v))
        return 0;
    *out = PyFloat_AS_DOUBLE(v);
    return 1;
}

/* math.hypot(x, y) as Python computes it: -1 with an error set, else 0 */
static inline int hypot_py(PyObject *hypot, double x, double y, double *out)
{
    PyObject *a[2] = {PyFloat_FromDouble(x), PyFloat_FromDouble(y)}, *r = NULL;
    if (a[0] != NULL && a[1] != NULL)
        r = PyObject_Vectorcall(hypot, a, 2, NULL);
    Py_XDECREF(a[0]);
    Py_XDECREF(a[1]);
    if (r == NULL)
        return -1;
    int ok = is_float(r, out);
    Py_DECREF(r);
    if (!ok)
        PyErr_SetString(PyExc_TypeError, "hypot must give a float");
    return ok ? 0 : -1;
}

/* the truth of o.name(*args) (a Python method, as the reference calls it): 0/1, -1 with an error */
static inline int call_truth(PyObject *o, PyObject *name, PyObject *const *args, size_t n)
{
    PyObject *a[8] = {o};
    for (size_t k = 0; k < n; k++)
        a[k + 1] = args[k];
    PyObject *r = PyObject_VectorcallMethod(name, a, n + 1, NULL);
    if (r == NULL)
        return -1;
    int v = PyObject_IsTrue(r);
    Py_DECREF(r);
    return v;
}

static inline int call_void(PyObject *o, PyObject *name)
{
    PyObject *r = PyObject_CallMethodNoArgs(o, name);
    Py_XDECREF(r);
    return r == NULL ? -1 : 0;
}

static inline int counter(PyObject *o, long long *v)
{
    return o != NULL && count_of(o, v) && *v >= 0 && *v < COUNT_MAX;
}

#endif
