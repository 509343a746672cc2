/* livefix.analysis._sigcore: the two satellite loops, SignalStats._accumulate_sats (accumulate())
 * and SignalStats._baseline_sats (baselines()). For each satellite every value and container entry
 * is checked first and the changes follow in the Python order; a satellite the Python loop must
 * take stops the loop there (see _sigcore.c).
 */
#include "_sigcore.h"

/* ---- accumulate ---- */

PyObject *sig_accumulate(PyObject *mod, PyObject *args)
{
    (void)mod;
    PyObject *sats, *cs, *by_sys, *bands, *cells, *mask;
    if (!PyArg_ParseTuple(args, "O!O!O!O!O!O", &PyList_Type, &sats, &PyList_Type, &cs, &PyDict_Type, &by_sys,
                          &PyList_Type, &bands, &PyDict_Type, &cells, &mask))
        return NULL;
    if (!sig_need_config())
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
            Py_ssize_t bi = sig_band_tab[el], nb = PyList_GET_SIZE(bands);
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
            x = sig_sin_tab[el];
            PyObject *a = v[F_AZIM];
            if (PyLong_CheckExact(a)) {
                int over = 0;
                long long ai = PyLong_AsLongLongAndOverflow(a, &over);
                if (over)
                    break;
                ai %= 360;
                if (ai < 0)
                    ai += 360;
                azc = ai / sig_sector_az;
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
            PyObject *i0 = PyLong_FromLongLong(azc), *i1 = PyLong_FromSsize_t(sig_cell_el_tab[el]);
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

PyObject *sig_baselines(PyObject *mod, PyObject *args)
{
    (void)mod;
    PyObject *sats, *base, *t, *thr, *seen, *drops, *measured;
    int frozen;
    if (!PyArg_ParseTuple(args, "OO!OOpO!O!O!", &sats, &PyDict_Type, &base, &t, &thr, &frozen, &PySet_Type, &seen,
                          &PyList_Type, &drops, &PyList_Type, &measured))
        return NULL;
    if (!sig_need_config())
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
            if (bn >= sig_base_min_n) {
                if (has_c) {
                    PyObject *d = PyFloat_FromDouble(b0 - c);
                    r = d == NULL || PyList_Append(measured, d) < 0 || PyList_Append(drops, d) < 0 ? -1 : 0;
                    Py_XDECREF(d);
                }
                else if (td - b2 <= sig_lost_s) {
                    double x = b0 - sig_lost_cn0; /* max(thr, x): thr unless x is greater */
                    PyObject *d = x > thrd ? PyFloat_FromDouble(x) : Py_NewRef(thr);
                    r = d == NULL || PyList_Append(drops, d) < 0 ? -1 : 0;
                    Py_XDECREF(d);
                }
            }
            if (r == 0 && has_c) {
                if (!frozen || bn < sig_base_min_n) {
                    double a;
                    if (bn >= sig_base_min_n) {
                        a = td - b2;
                        a = (a > 0.0 ? a : 0.0) / sig_base_tau_s;
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
