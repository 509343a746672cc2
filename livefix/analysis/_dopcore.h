/* Shared by _dopcore.c (the solve, the module) and _dopused.c (the used-satellite pass): one
 * extension, livefix.analysis._dopcore, built from both files. */
#ifndef LIVEFIX_DOPCORE_H
#define LIVEFIX_DOPCORE_H
#define PY_SSIZE_T_CLEAN
#include <Python.h>
#include <math.h>

#include "../_corekit.h"

#define DOP_MAX_NAMES 32 /* distinct system names dop_rank_names sorts */
#define DOP_HIDDEN __attribute__((visibility("hidden")))

enum { K_GDOP, K_PDOP, K_HDOP, K_VDOP, K_TDOP, K_COUNT };
enum { U_SYSTEM, U_PRN, U_ELEV, U_AZIM, U_USED, U_COUNT };

typedef struct {
    PyObject *keys[K_COUNT];    /* the result dict's keys */
    PyTypeObject *sat_type;     /* livefix.state.epoch.SatObs once configured (held) */
    Py_ssize_t off[U_COUNT];    /* slot offsets of its fields */
} dop_state;

/* A finite exact float, or an exact int that converts exactly: 1 and its value, else 0. */
static inline int value_of(PyObject *v, double *out)
{
    if (PyFloat_CheckExact(v)) {
        double x = PyFloat_AS_DOUBLE(v);
        if (!isfinite(x))
            return 0;
        *out = x;
        return 1;
    }
    return PyLong_CheckExact(v) && kit_exact_int(v, out);
}

/* Equal exact str (no error possible for exact str operands). */
static inline int same_str(PyObject *a, PyObject *b)
{
    return a == b || PyUnicode_Compare(a, b) == 0;
}

/* rank[i]: the place of names[i] (exact str, k <= DOP_MAX_NAMES) in code-point order, as sorted(). */
DOP_HIDDEN void dop_rank_names(PyObject *const *names, int k, int *rank);
DOP_HIDDEN PyObject *dop_configure(PyObject *module, PyObject *type);
DOP_HIDDEN PyObject *dop_used(PyObject *module, PyObject *const *args, Py_ssize_t nargs);

#endif
