/* livefix.analysis._sigcore: the two satellite loops, SignalStats._accumulate_sats (accumulate())
 * and SignalStats._baseline_sats (baselines()). For each satellite every value and container entry
 * is checked first and the changes follow in the Python order; a satellite the Python loop must
 * take stops the loop there (see _sigcore.c). accumulate() keeps each entry's sums in C while it
 * runs (Pend: the same additions in the same order) and writes every entry back once at the end.
 */
#include "_sigcore.h"

/* ---- accumulate ---- */

/* The sums of one entry (a [sum, n] of by_sys or bands, or an [n, Σ sin el, Σ C/N0] of cells)
 * while the loop runs: added here in the Python order and written back once at the end, so an
 * entry many satellites add to is not rebuilt per satellite. Keyed by the list itself, so a list
 * held in two places gets every addition in order, as the Python entries would. */
typedef struct {
    PyObject *e; /* borrowed: the containers hold it, no Python code runs while the loop does */
    double f1, f2;
    long long n;
    int cell, dirty;
} Pend;

#define PEND_CAP 256 /* power of 2 */
#define PEND_MAX 160 /* entries per call; past that the Python loop takes the rest */
#define PEND_COUNT_MAX (1LL << 62)

/* The pending sums of entry e (checked "fi", or "iff" when cell), read from it the first time;
 * NULL when the table is full or a count is too large to add to here. */
static Pend *pend_get(Pend *tab, int *used, PyObject *e, int cell)
{
    size_t j = ((size_t)e >> 4) & (PEND_CAP - 1);
    while (tab[j].e != NULL && tab[j].e != e)
        j = (j + 1) & (PEND_CAP - 1);
    Pend *p = &tab[j];
    if (p->e != NULL)
        return p->cell == cell ? p : NULL;
    if (*used >= PEND_MAX)
        return NULL;
    PyObject *n = PyList_GET_ITEM(e, cell ? 0 : 1);
    long long nv = PyLong_AsLongLong(n);
    if (nv > PEND_COUNT_MAX || nv < -PEND_COUNT_MAX)
        return NULL;
    p->e = e;
    p->cell = cell;
    p->dirty = 0;
    p->n = nv;
    p->f1 = PyFloat_AS_DOUBLE(PyList_GET_ITEM(e, cell ? 1 : 0));
    p->f2 = cell ? PyFloat_AS_DOUBLE(PyList_GET_ITEM(e, 2)) : 0.0;
    (*used)++;
    return p;
}

/* The pending sums written back into their lists: 0, or -1 (no memory) */
static int pend_flush(Pend *tab)
{
    int r = 0;
    for (size_t j = 0; j < PEND_CAP; j++) {
        Pend *p = &tab[j];
        if (p->e == NULL || !p->dirty)
            continue;
        if (p->cell) {
            if (put(p->e, 0, PyLong_FromLongLong(p->n)) < 0 || put(p->e, 1, PyFloat_FromDouble(p->f1)) < 0
                || put(p->e, 2, PyFloat_FromDouble(p->f2)) < 0)
                r = -1;
        }
        else if (put(p->e, 0, PyFloat_FromDouble(p->f1)) < 0 || put(p->e, 1, PyLong_FromLongLong(p->n)) < 0)
            r = -1;
    }
    return r;
}

PyObject *sig_accumulate(PyObject *mod, PyObject *args)
{
    (void)mod;
    PyObject *sats, *cs, *by_sys, *bands, *cells, *mask;
    if (!PyArg_ParseTuple(args, "O!O!O!O!O!O", &PyList_Type, &sats, &PyList_Type, &cs, &PyDict_Type, &by_sys,
                          &PyList_Type, &bands, &PyDict_Type, &cells, &mask))
        return NULL;
    if (!sig_need_config())
        return NULL;
    double maskd;
    if (!num_of(mask, &maskd) || !PyList_CheckExact(cs) || !PyDict_CheckExact(by_sys) || !PyDict_CheckExact(cells)
        || !PyList_CheckExact(bands))
        return PyLong_FromLong(0);
    Py_ssize_t i = sig_accumulate_run(sats, cs, by_sys, bands, cells, maskd);
    return i < 0 ? NULL : PyLong_FromSsize_t(i);
}

Py_ssize_t sig_accumulate_run(PyObject *sats, PyObject *cs, PyObject *by_sys, PyObject *bands, PyObject *cells,
                              double maskd)
{
    double sum[5];
    if (PyList_GET_SIZE(cs) != 5)
        return 0;
    for (int k = 0; k < 5; k++) {
        PyObject *x = PyList_GET_ITEM(cs, k);
        if (!PyFloat_CheckExact(x))
            return 0;
        sum[k] = PyFloat_AS_DOUBLE(x);
    }
    PyObject *last = NULL, *acc = NULL; /* strong: the system of the previous satellite and its sums */
    Pend tab[PEND_CAP], *pacc = NULL;
    memset(tab, 0, sizeof tab);
    Py_ssize_t i = 0;
    int failed = 0, used = 0;
    for (; i < PyList_GET_SIZE(sats); i++) {
        PyObject *v[F_COUNT], *s = PyList_GET_ITEM(sats, i), *b = NULL, *key = NULL, *cell = NULL;
        Pend *pb = NULL, *pc = NULL, *pf = NULL;
        if (used > PEND_MAX - 3 || !fields_of(s, v))
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
            if (!entry_ok(b, "fi") || (pb = pend_get(tab, &used, b, 0)) == NULL)
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
            if (cell != NULL && (!entry_ok(cell, "iff") || (pc = pend_get(tab, &used, cell, 1)) == NULL)) {
                Py_DECREF(key);
                break;
            }
        }
        int same = last != NULL && (last == v[F_SYSTEM] || PyUnicode_Compare(last, v[F_SYSTEM]) == 0);
        PyObject *found = NULL;
        if (!same) {
            found = PyDict_GetItemWithError(by_sys, v[F_SYSTEM]);
            if (found != NULL && (!entry_ok(found, "fi") || (pf = pend_get(tab, &used, found, 0)) == NULL)) {
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
                pf = pend_get(tab, &used, acc, 0); /* a new list, room checked above: not NULL */
            }
            else
                acc = Py_NewRef(found);
            pacc = pf;
        }
        if (pacc == NULL || (in_band && pb == NULL)) { /* cannot be: checked above */
            Py_XDECREF(key);
            PyErr_SetString(PyExc_SystemError, "_sigcore.accumulate: no sums for an entry");
            failed = 1;
            break;
        }
        pacc->f1 += c; /* acc[0] += c; acc[1] += 1 */
        pacc->n += 1;
        pacc->dirty = 1;
        if (in_band) {
            pb->f1 += c;
            pb->n += 1;
            pb->dirty = 1;
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
                pc = pend_get(tab, &used, cell, 1);
            }
            Py_DECREF(key);
            if (pc == NULL) {
                PyErr_SetString(PyExc_SystemError, "_sigcore.accumulate: no sums for a cell");
                failed = 1;
                break;
            }
            pc->n += 1;
            pc->f1 += x;
            pc->f2 += c;
            pc->dirty = 1;
        }
    }
    Py_XDECREF(last);
    Py_XDECREF(acc);
    if (pend_flush(tab) < 0) /* the entries' sums as far as they got, as the in-place adds left them */
        failed = 1;
    for (int k = 0; k < 5; k++) /* as the Python finally: the sums as far as they got */
        if (put(cs, k, PyFloat_FromDouble(sum[k])) < 0)
            failed = 1;
    if (failed) {
        if (!PyErr_Occurred())
            PyErr_NoMemory();
        return -1;
    }
    return i;
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
            if (bn == -1 && has_c) { /* 1.0 / (bn + 1): ZeroDivisionError in the Python loop */
                Py_DECREF(key);
                break;
            }
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
                    double a = sig_base_weight(bn, td, b2);
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
