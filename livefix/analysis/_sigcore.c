/* livefix.analysis._sigcore: the two once-per-second satellite loops of livefix/analysis/signal.py
 * (SignalStats._accumulate_sats and SignalStats._baseline_sats) in C.
 *
 * Why: with ~40 signals in view these loops cost tens of microseconds per run in Python, the largest
 * single item of the per-epoch analysis. The Python loops stay the reference: each function here
 * takes the same containers and updates them in place with the same float operations in the same
 * order (built with -ffp-contract=off, no fast math), creating entries in the same order.
 *
 * Hand-over instead of error mirroring: for each satellite every value and container entry is
 * checked before anything is changed. Exact int (|v| <= 2**53), exact float, None and exact str
 * are handled; any other type, any value whose Python operation would raise (an elevation float in
 * 0..90 used as a list index, a non-finite azimuth given to int()), or an entry of an unexpected
 * shape stops the loop there. The function returns the number of satellites done, and the Python
 * loop goes on from that one, so odd inputs take exactly the reference's path, exceptions and
 * partial states included. tests/analysis/test_signal_native.py compares the two step by step.
 *
 * Tables and constants (sin of whole degrees, band and sector-row tables, time constants) are
 * handed over once by configure(), so they can never drift from the Python module.
 */
#define PY_SSIZE_T_CLEAN
#include <Python.h>
#include <structmember.h>
#include <math.h>

#define API 1
#define EXACT_INT_MAX 9007199254740992LL /* 2**53: ints up to this convert to double exactly */

enum { F_SYSTEM, F_PRN, F_SIGNAL, F_ELEV, F_AZIM, F_CN0, F_COUNT };
static const char *FIELD_NAMES[F_COUNT] = {"system", "prn", "signal", "elev", "azim", "cn0"};

static int configured;
static PyTypeObject *sat_type;          /* livefix.state.epoch.SatObs (held) */
static Py_ssize_t field_off[F_COUNT];   /* slot offsets of its fields */
static double sin_tab[91];
static Py_ssize_t band_tab[91], cell_el_tab[91];
static long long sector_az, base_min_n;
static double base_tau_s, lost_s, lost_cn0;

/* ---- values ---- */

/* An exact int that converts to double exactly, or an exact float: 1 and its value, else 0. */
static int num_of(PyObject *v, double *out)
{
    if (PyFloat_CheckExact(v)) {
        *out = PyFloat_AS_DOUBLE(v);
        return 1;
    }
    if (PyLong_CheckExact(v)) {
        int over = 0;
        long long x = PyLong_AsLongLongAndOverflow(v, &over);
        if (over || x > EXACT_INT_MAX || x < -EXACT_INT_MAX)
            return 0;
        *out = (double)x;
        return 1;
    }
    return 0;
}

/* An exact int that fits a long long with room for + 1: 1 and its value, else 0. */
static int count_of(PyObject *v, long long *out)
{
    if (!PyLong_CheckExact(v))
        return 0;
    int over = 0;
    long long x = PyLong_AsLongLongAndOverflow(v, &over);
    if (over || x == LLONG_MAX)
        return 0;
    *out = x;
    return 1;
}

/* A list of at least n items, the first n of exact types: 'f' float, 'i' int (a count). */
static int entry_ok(PyObject *e, const char *kinds)
{
    Py_ssize_t n = (Py_ssize_t)strlen(kinds);
    if (!PyList_CheckExact(e) || PyList_GET_SIZE(e) < n)
        return 0;
    for (Py_ssize_t k = 0; k < n; k++) {
        PyObject *x = PyList_GET_ITEM(e, k);
        long long dummy;
        if (kinds[k] == 'f' ? !PyFloat_CheckExact(x) : !count_of(x, &dummy))
            return 0;
    }
    return 1;
}

/* list[k] = v (v a new reference, stolen); the old item is a float or an int, so dropping it runs
 * no Python code. -1 when v is NULL (no memory). */
static int put(PyObject *list, Py_ssize_t k, PyObject *v)
{
    if (v == NULL)
        return -1;
    PyObject *old = PyList_GET_ITEM(list, k);
    PyList_SET_ITEM(list, k, v);
    Py_DECREF(old);
    return 0;
}

static int add_float(PyObject *list, Py_ssize_t k, double x)
{
    return put(list, k, PyFloat_FromDouble(PyFloat_AS_DOUBLE(PyList_GET_ITEM(list, k)) + x));
}

static int add_one(PyObject *list, Py_ssize_t k)
{
    return put(list, k, PyLong_FromLongLong(PyLong_AsLongLong(PyList_GET_ITEM(list, k)) + 1));
}

static PyObject *slot(PyObject *s, int f)
{
    return *(PyObject **)((char *)s + field_off[f]);
}

/* The fields of a SatObs (borrowed), or 0 when s is something else or a slot is unset. */
static int fields_of(PyObject *s, PyObject **v)
{
    if (Py_TYPE(s) != sat_type)
        return 0;
    for (int f = 0; f < F_COUNT; f++)
        if ((v[f] = slot(s, f)) == NULL)
            return 0;
    return 1;
}

/* Python's float `x % 360` (floor modulo: the sign of the divisor), then int(); x finite. */
static long long az_cell(double x)
{
    double m = fmod(x, 360.0);
    if (m != 0.0) {
        if (m < 0.0)
            m += 360.0;
    }
    else
        m = 0.0; /* copysign(0, 360) */
    return (long long)m / sector_az;
}

/* ---- configure ---- */

static int table(PyObject *seq, double *d, Py_ssize_t *z)
{
    if (!PyList_Check(seq) || PyList_GET_SIZE(seq) != 91) {
        PyErr_SetString(PyExc_ValueError, "tables must be lists of 91 numbers");
        return -1;
    }
    for (Py_ssize_t e = 0; e < 91; e++) {
        PyObject *x = PyList_GET_ITEM(seq, e);
        if (d != NULL) {
            if (!PyFloat_CheckExact(x)) {
                PyErr_SetString(PyExc_TypeError, "the sine table must hold floats");
                return -1;
            }
            d[e] = PyFloat_AS_DOUBLE(x);
        }
        else {
            if (!PyLong_CheckExact(x)) {
                PyErr_SetString(PyExc_TypeError, "index tables must hold ints");
                return -1;
            }
            z[e] = PyLong_AsSsize_t(x);
            if (z[e] == -1 && PyErr_Occurred())
                return -1;
        }
    }
    return 0;
}

static PyObject *configure(PyObject *mod, PyObject *args)
{
    PyObject *type, *sin_l, *band_l, *cell_l;
    long long az, min_n;
    double tau, lost, lost_c;
    if (!PyArg_ParseTuple(args, "O!O!O!O!LLddd", &PyType_Type, &type, &PyList_Type, &sin_l, &PyList_Type, &band_l,
                          &PyList_Type, &cell_l, &az, &min_n, &tau, &lost, &lost_c))
        return NULL;
    if (az <= 0) {
        PyErr_SetString(PyExc_ValueError, "sector width must be positive");
        return NULL;
    }
    Py_ssize_t off[F_COUNT];
    for (int f = 0; f < F_COUNT; f++) {
        PyObject *d = PyObject_GetAttrString(type, FIELD_NAMES[f]);
        if (d == NULL)
            return NULL;
        int ok = Py_TYPE(d) == &PyMemberDescr_Type && ((PyMemberDescrObject *)d)->d_member->type == T_OBJECT_EX;
        if (ok)
            off[f] = ((PyMemberDescrObject *)d)->d_member->offset;
        Py_DECREF(d);
        if (!ok) {
            PyErr_Format(PyExc_TypeError, "%s is not a slot of the satellite type", FIELD_NAMES[f]);
            return NULL;
        }
    }
    double s[91];
    Py_ssize_t b[91], c[91];
    if (table(sin_l, s, NULL) < 0 || table(band_l, NULL, b) < 0 || table(cell_l, NULL, c) < 0)
        return NULL;
    memcpy(sin_tab, s, sizeof s);
    memcpy(band_tab, b, sizeof b);
    memcpy(cell_el_tab, c, sizeof c);
    memcpy(field_off, off, sizeof off);
    Py_INCREF(type);
    Py_XSETREF(sat_type, (PyTypeObject *)type);
    sector_az = az;
    base_min_n = min_n;
    base_tau_s = tau;
    lost_s = lost;
    lost_cn0 = lost_c;
    configured = 1;
    Py_RETURN_NONE;
}

static int need_config(void)
{
    if (!configured)
        PyErr_SetString(PyExc_RuntimeError, "livefix.analysis._sigcore: configure() was not called");
    return configured;
}

/* ---- accumulate ---- */

PyDoc_STRVAR(accumulate_doc,
"accumulate(sats, cs, by_sys, bands, cells, mask) -> int\n\n"
"SignalStats._accumulate_sats over sats (a list) in place; returns how many satellites were done\n"
"(the Python loop goes on from there). cs is written back as the Python finally does.");

static PyObject *accumulate(PyObject *mod, PyObject *args)
{
    PyObject *sats, *cs, *by_sys, *bands, *cells, *mask;
    if (!PyArg_ParseTuple(args, "O!O!O!O!O!O", &PyList_Type, &sats, &PyList_Type, &cs, &PyDict_Type, &by_sys,
                          &PyList_Type, &bands, &PyDict_Type, &cells, &mask))
        return NULL;
    if (!need_config())
        return NULL;
    double maskd, sum[5];
    if (!num_of(mask, &maskd) || !PyList_CheckExact(cs) || PyList_GET_SIZE(cs) != 5 || !PyDict_CheckExact(by_sys)
        || !PyDict_CheckExact(cells) || !PyList_CheckExact(bands))
        return PyLong_FromLong(0);
    for (int k = 0; k < 5; k++) {
        PyObject *x = PyList_GET_ITEM(cs, k);
        if (!PyFloat_CheckExact(x))
            return PyLong_FromLong(0);
        sum[k] = PyFloat_AS_DOUBLE(x);
    }
    PyObject *last = NULL, *acc = NULL; /* strong: the system of the previous satellite and its sums */
    Py_ssize_t i = 0;
    int failed = 0;
    for (; i < PyList_GET_SIZE(sats); i++) {
        PyObject *v[F_COUNT], *s = PyList_GET_ITEM(sats, i), *b = NULL, *key = NULL, *cell = NULL;
        if (!fields_of(s, v))
            break;
        /* -- checks: nothing is changed for a satellite the Python loop must take -- */
        double c = 0.0, x = 0.0;
        long long el = -1, azc = 0;
        int in_band = 0, in_curve = 0, has_cell = 0;
        if (v[F_CN0] != Py_None && !num_of(v[F_CN0], &c))
            break;
        if (c == 0.0)
            c = 0.0; /* `s.cn0 or 0`: a zero (or -0.0) becomes the int 0 */
        if (!PyUnicode_CheckExact(v[F_SYSTEM]))
            break;
        PyObject *e = v[F_ELEV];
        if (PyLong_CheckExact(e)) {
            int over = 0;
            el = PyLong_AsLongLongAndOverflow(e, &over);
            in_band = !over && el >= 0 && el <= 90;
        }
        else if (PyFloat_CheckExact(e)) {
            double d = PyFloat_AS_DOUBLE(e);
            if (0 <= d && d <= 90)
                break; /* a float list index: the Python loop raises TypeError */
        }
        else if (e != Py_None)
            break;
        if (in_band) {
            Py_ssize_t bi = band_tab[el], nb = PyList_GET_SIZE(bands);
            if (bi < 0)
                bi += nb;
            if (bi < 0 || bi >= nb)
                break;
            b = PyList_GET_ITEM(bands, bi);
            if (!entry_ok(b, "fi"))
                break;
            in_curve = (double)el >= maskd;
        }
        if (in_curve) {
            x = sin_tab[el];
            PyObject *a = v[F_AZIM];
            if (PyLong_CheckExact(a)) {
                int over = 0;
                long long ai = PyLong_AsLongLongAndOverflow(a, &over);
                if (over)
                    break;
                ai %= 360;
                if (ai < 0)
                    ai += 360;
                azc = ai / sector_az;
                has_cell = 1;
            }
            else if (PyFloat_CheckExact(a)) {
                double d = PyFloat_AS_DOUBLE(a);
                if (!isfinite(d))
                    break; /* int(nan): ValueError in the Python loop */
                azc = az_cell(d);
                has_cell = 1;
            }
            else if (a != Py_None)
                break;
        }
        if (has_cell) {
            PyObject *i0 = PyLong_FromLongLong(azc), *i1 = PyLong_FromSsize_t(cell_el_tab[el]);
            key = (i0 && i1) ? PyTuple_Pack(2, i0, i1) : NULL;
            Py_XDECREF(i0);
            Py_XDECREF(i1);
            if (key == NULL) {
                failed = 1;
                break;
            }
            cell = PyDict_GetItemWithError(cells, key); /* a tuple of ints: no Python code, no error */
            if (cell != NULL && !entry_ok(cell, "iff")) {
                Py_DECREF(key);
                break;
            }
        }
        int same = last != NULL && (last == v[F_SYSTEM] || PyUnicode_Compare(last, v[F_SYSTEM]) == 0);
        PyObject *found = NULL;
        if (!same) {
            found = PyDict_GetItemWithError(by_sys, v[F_SYSTEM]);
            if (found != NULL && !entry_ok(found, "fi")) {
                Py_XDECREF(key);
                break;
            }
        }
        else if (!entry_ok(acc, "fi")) {
            Py_XDECREF(key);
            break;
        }
        /* -- changes, in the Python order -- */
        if (!same) {
            Py_XDECREF(acc);
            Py_XSETREF(last, Py_NewRef(v[F_SYSTEM]));
            if (found == NULL) {
                acc = Py_BuildValue("[di]", 0.0, 0);
                if (acc == NULL || PyDict_SetItem(by_sys, v[F_SYSTEM], acc) < 0) {
                    Py_XDECREF(key);
                    failed = 1;
                    break;
                }
            }
            else
                acc = Py_NewRef(found);
        }
        if (add_float(acc, 0, c) < 0 || add_one(acc, 1) < 0) {
            Py_XDECREF(key);
            failed = 1;
            break;
        }
        if (in_band && (add_float(b, 0, c) < 0 || add_one(b, 1) < 0)) {
            Py_XDECREF(key);
            failed = 1;
            break;
        }
        if (in_curve) {
            sum[0] += 1.0;
            sum[1] += x;
            sum[2] += x * x;
            sum[3] += c;
            sum[4] += x * c;
        }
        if (has_cell) {
            if (cell == NULL) {
                cell = Py_BuildValue("[idd]", 0, 0.0, 0.0);
                int r = cell == NULL ? -1 : PyDict_SetItem(cells, key, cell);
                Py_XDECREF(cell); /* held by the dict */
                if (r < 0) {
                    Py_DECREF(key);
                    failed = 1;
                    break;
                }
            }
            Py_DECREF(key);
            if (add_one(cell, 0) < 0 || add_float(cell, 1, x) < 0 || add_float(cell, 2, c) < 0) {
                failed = 1;
                break;
            }
        }
    }
    Py_XDECREF(last);
    Py_XDECREF(acc);
    for (int k = 0; k < 5; k++) /* as the Python finally: the sums as far as they got */
        if (put(cs, k, PyFloat_FromDouble(sum[k])) < 0)
            failed = 1;
    if (failed) {
        if (!PyErr_Occurred())
            PyErr_NoMemory();
        return NULL;
    }
    return PyLong_FromSsize_t(i);
}

/* ---- baselines ---- */

PyDoc_STRVAR(baselines_doc,
"baselines(sats, base, t, thr, frozen, seen, drops, measured) -> int\n\n"
"SignalStats._baseline_sats over sats (a tuple or list) in place; returns how many satellites\n"
"were done (the Python loop goes on from there).");

static PyObject *baselines(PyObject *mod, PyObject *args)
{
    PyObject *sats, *base, *t, *thr, *seen, *drops, *measured;
    int frozen;
    if (!PyArg_ParseTuple(args, "OO!OOpO!O!O!", &sats, &PyDict_Type, &base, &t, &thr, &frozen, &PySet_Type, &seen,
                          &PyList_Type, &drops, &PyList_Type, &measured))
        return NULL;
    if (!need_config())
        return NULL;
    double thrd, td;
    if (!(PyTuple_CheckExact(sats) || PyList_CheckExact(sats)) || !PyDict_CheckExact(base) || !PyFloat_CheckExact(t)
        || !num_of(thr, &thrd) || !PySet_CheckExact(seen))
        return PyLong_FromLong(0);
    td = PyFloat_AS_DOUBLE(t);
    Py_ssize_t i = 0;
    int failed = 0;
    for (; i < PySequence_Fast_GET_SIZE(sats); i++) {
        PyObject *v[F_COUNT], *s = PySequence_Fast_GET_ITEM(sats, i);
        if (!fields_of(s, v) || !PyUnicode_CheckExact(v[F_SYSTEM]) || !PyLong_CheckExact(v[F_PRN])
            || !PyUnicode_CheckExact(v[F_SIGNAL]))
            break;
        /* -- checks -- */
        double c = 0.0;
        int has_c = 0;
        if (v[F_CN0] != Py_None) {
            if (!num_of(v[F_CN0], &c))
                break;
            has_c = c != 0.0 && c > 0.0; /* `c and c > 0` (nan is true, then not > 0) */
        }
        PyObject *key = PyTuple_Pack(3, v[F_SYSTEM], v[F_PRN], v[F_SIGNAL]);
        if (key == NULL) {
            failed = 1;
            break;
        }
        PyObject *b = PyDict_GetItemWithError(base, key); /* str and int keys: no Python code */
        double b0 = 0.0, b2 = 0.0;
        long long bn = 0;
        if (b != NULL) {
            if (!entry_ok(b, "fif")) {
                Py_DECREF(key);
                break;
            }
            b0 = PyFloat_AS_DOUBLE(PyList_GET_ITEM(b, 0));
            bn = PyLong_AsLongLong(PyList_GET_ITEM(b, 1));
            b2 = PyFloat_AS_DOUBLE(PyList_GET_ITEM(b, 2));
        }
        /* -- changes, in the Python order -- */
        if (PySet_Add(seen, key) < 0) {
            Py_DECREF(key);
            failed = 1;
            break;
        }
        if (b != NULL) {
            Py_INCREF(b);
            int r = 0;
            if (bn >= base_min_n) {
                if (has_c) {
                    PyObject *d = PyFloat_FromDouble(b0 - c);
                    r = d == NULL || PyList_Append(measured, d) < 0 || PyList_Append(drops, d) < 0 ? -1 : 0;
                    Py_XDECREF(d);
                }
                else if (td - b2 <= lost_s) {
                    double x = b0 - lost_cn0; /* max(thr, x): thr unless x is greater */
                    PyObject *d = x > thrd ? PyFloat_FromDouble(x) : Py_NewRef(thr);
                    r = d == NULL || PyList_Append(drops, d) < 0 ? -1 : 0;
                    Py_XDECREF(d);
                }
            }
            if (r == 0 && has_c) {
                if (!frozen || bn < base_min_n) {
                    double a;
                    if (bn >= base_min_n) {
                        a = td - b2;
                        a = (a > 0.0 ? a : 0.0) / base_tau_s;
                        if (a > 1.0)
                            a = 1.0;
                    }
                    else
                        a = 1.0 / (double)(bn + 1);
                    r = put(b, 0, PyFloat_FromDouble(b0 + a * (c - b0)));
                    if (r == 0)
                        r = put(b, 1, PyLong_FromLongLong(bn + 1));
                }
                if (r == 0) {
                    PyObject *old = PyList_GET_ITEM(b, 2);
                    PyList_SET_ITEM(b, 2, Py_NewRef(t));
                    Py_DECREF(old);
                }
            }
            Py_DECREF(b);
            if (r < 0) {
                Py_DECREF(key);
                failed = 1;
                break;
            }
        }
        else if (has_c) {
            PyObject *e = Py_BuildValue("[diO]", c, 1, t);
            int r = e == NULL ? -1 : PyDict_SetItem(base, key, e);
            Py_XDECREF(e);
            if (r < 0) {
                Py_DECREF(key);
                failed = 1;
                break;
            }
        }
        Py_DECREF(key);
    }
    if (failed)
        return NULL;
    return PyLong_FromSsize_t(i);
}

static PyMethodDef methods[] = {
    {"configure", configure, METH_VARARGS,
     "configure(sat_type, sin, band, cell_el, sector_az, base_min_n, base_tau_s, lost_s, lost_cn0)\n\n"
     "The satellite type, tables and constants of livefix.analysis.signal (called once on import)."},
    {"accumulate", accumulate, METH_VARARGS, accumulate_doc},
    {"baselines", baselines, METH_VARARGS, baselines_doc},
    {NULL, NULL, 0, NULL},
};

static struct PyModuleDef moduledef = {
    PyModuleDef_HEAD_INIT, "livefix.analysis._sigcore",
    "C twin of the satellite loops of livefix.analysis.signal.SignalStats (the Python code is the reference).",
    -1, methods, NULL, NULL, NULL, NULL,
};

PyMODINIT_FUNC PyInit__sigcore(void)
{
    PyObject *m = PyModule_Create(&moduledef);
    if (m != NULL && PyModule_AddIntConstant(m, "API", API) < 0)
        Py_CLEAR(m);
    return m;
}
