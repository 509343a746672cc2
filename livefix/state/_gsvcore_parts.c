/* livefix.state._gsvcore.part_sats: the C twin of gsv._part_sats with prn.user_prn, the satellites of
 * one GSV part from its 16 block values. The assembler calls it for every part whose values it has
 * not seen yet; it is handed over as the part_sats callable of GsvAssembler, so the assembler itself
 * does not change. The number blocks are prn.py's tables (NMEA 0183 numbering and the receivers'
 * extensions, see there); tests/state/test_gsv_parts_native.py checks these copies against them.
 */
#include "_gsvcore.h"
#include <limits.h>

GSV_HIDDEN int gsv_parts_add(PyObject *mod); /* from the module init: adds part_sats */

typedef struct {
    long lo, hi;
    char letter;
    long off;
} Block;

/* prn.COMBINED_RANGES: GN and GP listings without a system ID */
static const Block COMBINED[] = {{1, 32, 'G', 0},         {33, 64, 'S', 87},        {65, 96, 'R', -64},
                                 {120, 158, 'S', 0},      {193, 200, 'J', -192},    {201, 263, 'C', -200},
                                 {301, 336, 'E', -300},   {401, 463, 'C', -400}};
/* prn.NATIVE (lo, hi, letter, 0) and prn.OFFSET_BLOCKS per system */
static const Block NATIVE[] = {{1, 32, 'R', 0}, {1, 36, 'E', 0}, {1, 63, 'C', 0}, {1, 10, 'J', 0}, {1, 14, 'I', 0}};
static const Block OFFSET[] = {{65, 96, 'R', -64},    {301, 336, 'E', -300}, {201, 263, 'C', -200},
                               {401, 463, 'C', -400}, {193, 202, 'J', -192}};
#define N_OF(a) ((int)(sizeof(a) / sizeof((a)[0])))

/* prn.user_prn(system, n) for an int n: 1 with new references *letter, *num; 0 when no block fits */
static int user_prn(PyObject *system, PyObject *n, PyObject **letter, PyObject **num)
{
    int over = 0;
    long long v = PyLong_AsLongLongAndOverflow(n, &over);
    if (v == -1 && PyErr_Occurred()) return -1;
    if (over) v = over > 0 ? LLONG_MAX : LLONG_MIN; /* beyond every block, as the Python int is */
    Py_UCS4 sys = 0;
    if (system != Py_None) {
        if (PyUnicode_GET_LENGTH(system) != 1) goto as_written;
        sys = PyUnicode_READ_CHAR(system, 0);
    }
    if (system == Py_None || sys == 'G') {
        for (int i = 0; i < N_OF(COMBINED); i++)
            if (COMBINED[i].lo <= v && v <= COMBINED[i].hi) {
                *letter = PyUnicode_FromOrdinal(COMBINED[i].letter);
                *num = *letter == NULL ? NULL : PyLong_FromLongLong(v + COMBINED[i].off);
                if (*num == NULL) {
                    Py_CLEAR(*letter);
                    return -1;
                }
                return 1;
            }
        return 0;
    }
    int has_table = 0;
    for (int i = 0; i < N_OF(NATIVE); i++) {
        if ((Py_UCS4)NATIVE[i].letter != sys) continue;
        has_table = 1;
        if (NATIVE[i].lo <= v && v <= NATIVE[i].hi) goto as_written;
    }
    if (!has_table) goto as_written; /* a system without a numbering table here (SBAS): as written */
    for (int i = 0; i < N_OF(OFFSET); i++)
        if ((Py_UCS4)OFFSET[i].letter == sys && OFFSET[i].lo <= v && v <= OFFSET[i].hi) {
            *num = PyLong_FromLongLong(v + OFFSET[i].off);
            if (*num == NULL) return -1;
            *letter = Py_NewRef(system);
            return 1;
        }
    return 0;
as_written: /* return system, n: the very objects */
    *letter = Py_NewRef(system);
    *num = Py_NewRef(n);
    return 1;
}

static PyObject *part_sats(PyObject *mod, PyObject *const *args, Py_ssize_t nargs)
{
    (void)mod;
    if (nargs != 2) {
        PyErr_Format(PyExc_TypeError, "part_sats() takes 2 positional arguments (%zd given)", nargs);
        return NULL;
    }
    PyObject *system = args[0], *vals = args[1];
    if (system != Py_None && !PyUnicode_CheckExact(system)) {
        PyErr_SetString(PyExc_TypeError, "part_sats(): system must be None or a str (a TALKER_SYSTEM value)");
        return NULL;
    }
    if (!PyTuple_CheckExact(vals) || PyTuple_GET_SIZE(vals) != 16) {
        PyErr_SetString(PyExc_ValueError, "part_sats(): expected a tuple of 16 block values");
        return NULL;
    }
    PyObject *sats[4], *unknown[4], *res = NULL;
    int ns = 0, nu = 0;
    for (int i = 0; i < 16; i += 4) {
        PyObject *svid = PyTuple_GET_ITEM(vals, i);
        if (!PyLong_CheckExact(svid)) continue;
        PyObject *letter, *num;
        int k = user_prn(system, svid, &letter, &num);
        if (k < 0) goto done;
        if (k == 0) {
            unknown[nu++] = Py_NewRef(svid);
            continue;
        }
        PyObject *e = PyTuple_GET_ITEM(vals, i + 1), *a = PyTuple_GET_ITEM(vals, i + 2);
        PyObject *c = PyTuple_GET_ITEM(vals, i + 3);
        PyObject *t = PyTuple_New(5);
        if (t == NULL) {
            Py_DECREF(letter);
            Py_DECREF(num);
            goto done;
        }
        PyTuple_SET_ITEM(t, 0, letter);
        PyTuple_SET_ITEM(t, 1, num);
        PyTuple_SET_ITEM(t, 2, Py_NewRef(PyLong_CheckExact(e) ? e : Py_None));
        PyTuple_SET_ITEM(t, 3, Py_NewRef(PyLong_CheckExact(a) ? a : Py_None));
        PyTuple_SET_ITEM(t, 4, Py_NewRef(PyLong_CheckExact(c) || PyFloat_CheckExact(c) ? c : Py_None)); /* dd.d too */
        sats[ns++] = t;
    }
    PyObject *ts = PyTuple_New(ns), *tu = ts == NULL ? NULL : PyTuple_New(nu);
    if (tu != NULL) {
        for (int i = 0; i < ns; i++) PyTuple_SET_ITEM(ts, i, sats[i]);
        for (int i = 0; i < nu; i++) PyTuple_SET_ITEM(tu, i, unknown[i]);
        ns = nu = 0; /* now the tuples' */
        res = PyTuple_Pack(2, ts, tu);
    }
    Py_XDECREF(ts);
    Py_XDECREF(tu);
done:
    for (int i = 0; i < ns; i++) Py_DECREF(sats[i]);
    for (int i = 0; i < nu; i++) Py_DECREF(unknown[i]);
    return res;
}

static PyMethodDef PART_SATS = {"part_sats", (PyCFunction)(void (*)(void))part_sats, METH_FASTCALL,
                                "part_sats(system, vals) -> (satellites, unknown numbers): gsv._part_sats in C."};

int gsv_parts_add(PyObject *mod)
{
    PyObject *name = PyModule_GetNameObject(mod);
    PyObject *fn = name == NULL ? NULL : PyCFunction_NewEx(&PART_SATS, NULL, name);
    Py_XDECREF(name);
    int r = fn == NULL ? -1 : PyModule_AddObjectRef(mod, "part_sats", fn);
    Py_XDECREF(fn);
    return r;
}
