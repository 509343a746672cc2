/* livefix._native: make(), the constructor of the frozen slotted state records (Epoch, SatObs)
 * without running their __init__; see the docstring in _native.c. */
#include "_native.h"
#include <structmember.h>  /* T_OBJECT_EX, READONLY: slot descriptors */

/* Checks everything per call (a pointer compare per slot): no Python value can make it write
 * outside the instance, skip a slot or set one twice. */
PyObject *nat_make(PyObject *self, PyObject *const *args, Py_ssize_t nargs)
{
    (void)self;
    if (nargs != 2 || !PyTuple_CheckExact(args[0]) || !PyTuple_CheckExact(args[1])) {
        PyErr_SetString(PyExc_TypeError, "make(slots, values): two tuples");
        return NULL;
    }
    PyObject *slots = args[0], *values = args[1];
    Py_ssize_t n = PyTuple_GET_SIZE(slots), i, members = 0;
    if (n == 0 || PyTuple_GET_SIZE(values) != n || !Py_IS_TYPE(PyTuple_GET_ITEM(slots, 0), &PyMemberDescr_Type)) {
        PyErr_SetString(PyExc_TypeError, "make: one value per slot descriptor");
        return NULL;
    }
    PyTypeObject *tp = PyDescr_TYPE(PyTuple_GET_ITEM(slots, 0));
    /* a Python class of object slots only: no other C fields that tp_new would have set up */
    if (!(tp->tp_flags & Py_TPFLAGS_HEAPTYPE) || tp->tp_base != &PyBaseObject_Type || tp->tp_itemsize != 0
        || tp->tp_dictoffset != 0 || tp->tp_weaklistoffset != 0 || tp->tp_members == NULL
        || tp->tp_basicsize != (Py_ssize_t)(sizeof(PyObject) + n * sizeof(PyObject *))) {
        PyErr_SetString(PyExc_TypeError, "make: a class of __slots__ only, on object");
        return NULL;
    }
    while (tp->tp_members[members].name != NULL) members++;
    if (members != n) {
        PyErr_Format(PyExc_TypeError, "make: %s has %zd slots, %zd given", tp->tp_name, members, n);
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
        PyErr_Format(PyExc_TypeError, "make: slot %zd is not a writable object slot of %s", i, tp->tp_name);
        return NULL;
    }
    PyObject *obj = tp->tp_alloc(tp, 0);  /* zeroed: every slot NULL */
    if (obj == NULL) return NULL;
    for (i = 0; i < n; i++) {
        PyObject **at = (PyObject **)((char *)obj + ((PyMemberDescrObject *)PyTuple_GET_ITEM(slots, i))->d_member->offset);
        if (*at != NULL) {  /* a descriptor given twice */
            Py_DECREF(obj);
            PyErr_Format(PyExc_TypeError, "make: slot %zd of %s given twice", i, tp->tp_name);
            return NULL;
        }
        PyObject *v = PyTuple_GET_ITEM(values, i);
        Py_INCREF(v);
        *at = v;
    }
    return obj;
}
