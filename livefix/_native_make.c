/* livefix._native: make(), the constructor of the frozen slotted state records (Epoch, SatObs)
 * without running their __init__; see the docstring in _native.c. */
#include "_native.h"
#include "_corekit.h"  /* kit_slot_class: the checks of the class and its slot descriptors */

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
    Py_ssize_t n = PyTuple_GET_SIZE(slots), i;
    if (PyTuple_GET_SIZE(values) != n) {
        PyErr_SetString(PyExc_TypeError, "make: one value per slot descriptor");
        return NULL;
    }
    PyTypeObject *tp = kit_slot_class(slots, "make");
    if (tp == NULL) return NULL;
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
