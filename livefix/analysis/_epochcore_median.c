/* livefix.analysis._epochcore: MedianPosition.on_epoch (livefix/analysis/median.py) as median_epoch(),
 * with the batch settle of _FixMedians (_settle, BinnedMedian.add_many and _put) when its batch is full;
 * configure_median; the module itself is in _epochcore.c.
 *
 * Why: every fixed epoch queues one row of five coordinates, and every BATCH rows the five binned
 * medians take them: runs of equal values are counted, then each run goes into its bin [count, sum].
 * Both are done here with the same float operations in the same order (x / width, floor, x * run,
 * sum + x * run), storing the same objects (the row of ep's own attributes, the value that ends a run
 * as _last) and the same dict entries in the same key order.
 *
 * Hand-over: everything is read and checked before anything is written. An epoch of a fix type not
 * seen yet, a fix test that does not answer True or False, and any value or container of another type:
 * median_epoch returns False having changed nothing (it may have asked the fix test, whose answer is a
 * memo of the epoch) and the Python code runs the reference. A full batch the settle here cannot take
 * (a bin count over MAX_BINS, which coarsens; a value or bin of another type; a value whose bin index is
 * not finite) is settled by the Python method, as the reference does it right after the append.
 * tests/analysis/test_site_native.py compares the two step by step.
 */
#include "_epochcore.h"

enum { M_QUALITY, M_LAT, M_LON, M_H, M_ALT, M_SEP, M_COUNT };
static const char *M_FIELDS[M_COUNT] = {"quality", "lat", "lon", "h", "alt_msl", "sep"};
enum { F_LAT, F_LON, F_H, F_ALT, F_SEP, F_PEND, F_COUNT };
static const char *F_FIELDS[F_COUNT] = {"lat", "lon", "h", "alt", "sep", "_pend"};
enum { B_WIDTH, B_BINS, B_N, B_LAST, B_RUN, B_COUNT };
static const char *B_FIELDS[B_COUNT] = {"width", "bins", "_n", "_last", "_run"};

#define ROWS_MAX 1024 /* the longest batch settled here (median.BATCH is 64) */

/* module state, set by configure_median */
static PyTypeObject *md_type, *md_fixm, *md_binned, *md_epoch;
static Py_ssize_t md_ep[M_COUNT], md_f[F_COUNT], md_b[B_COUNT];
static PyObject *md_fix_names, *md_none, *md_s_valid, *md_s_by_fix, *md_s_settle;
static Py_ssize_t md_batch, md_max_bins;

PyObject *ep_configure_median(PyObject *Py_UNUSED(mod), PyObject *args)
{
    PyObject *st, *fm, *bm, *epo, *names, *none;
    Py_ssize_t batch, maxb, o1[M_COUNT], o2[F_COUNT], o3[B_COUNT];
    const char *fmt = "%s is not a slot of %R";
    if (!PyArg_ParseTuple(args, "O!O!O!O!O!Unn", &PyType_Type, &st, &PyType_Type, &fm, &PyType_Type, &bm,
                          &PyType_Type, &epo, &PyDict_Type, &names, &none, &batch, &maxb)
        || kit_slot_offsets(epo, M_FIELDS, M_COUNT, o1, fmt) < 0 || kit_slot_offsets(fm, F_FIELDS, F_COUNT, o2, fmt) < 0
        || kit_slot_offsets(bm, B_FIELDS, B_COUNT, o3, fmt) < 0)
        return NULL;
    if (batch < 1 || batch > ROWS_MAX || maxb < 1) {
        PyErr_SetString(PyExc_ValueError, "configure_median: a batch of 1 to 1024 rows and MAX_BINS of 1 or more");
        return NULL;
    }
    if ((md_s_valid == NULL && (md_s_valid = PyUnicode_InternFromString("_valid")) == NULL)
        || (md_s_by_fix == NULL && (md_s_by_fix = PyUnicode_InternFromString("by_fix")) == NULL)
        || (md_s_settle == NULL && (md_s_settle = PyUnicode_InternFromString("_settle")) == NULL))
        return NULL;
    memcpy(md_ep, o1, sizeof o1);
    memcpy(md_f, o2, sizeof o2);
    memcpy(md_b, o3, sizeof o3);
    Py_XSETREF(md_fixm, (PyTypeObject *)Py_NewRef(fm));
    Py_XSETREF(md_binned, (PyTypeObject *)Py_NewRef(bm));
    Py_XSETREF(md_epoch, (PyTypeObject *)Py_NewRef(epo));
    Py_XSETREF(md_fix_names, Py_NewRef(names));
    Py_XSETREF(md_none, Py_NewRef(none));
    md_batch = batch, md_max_bins = maxb;
    Py_XSETREF(md_type, (PyTypeObject *)Py_NewRef(st)); /* last: median_epoch's "configured" */
    Py_RETURN_NONE;
}

static void set_at(PyObject *o, Py_ssize_t off, PyObject *v) /* v stolen; the old value is a plain value */
{
    PyObject **p = (PyObject **)((char *)o + off);
    PyObject *old = *p;
    *p = v;
    Py_XDECREF(old);
}

/* One run of equal values of a coordinate: the value ending it (the object), its count, its bin. */
typedef struct { PyObject *x; long long run; PyObject *key; double f; int fresh; } Run;
typedef struct { PyObject *bm, *last, *bins; long long n, run; double width; Py_ssize_t nruns; } Coord;

static Run runs[5][ROWS_MAX + 1];
static Coord coords[5];

static void drop_keys(int upto)
{
    for (int c = 0; c < upto; c++)
        for (Py_ssize_t r = 0; r < coords[c].nruns; r++)
            Py_CLEAR(runs[c][r].key);
}

/* BinnedMedian.add_many(xs)'s plan for coordinate c of fm (xs: column c of the rows, filtered as _settle
 * does): 1, 0 (hand back), -1 (error). The bin keys made are in runs[c] (coords[c].nruns of them). */
static int plan_coord(PyObject *fm, int c, PyObject *rows, Py_ssize_t nrows)
{
    Coord *k = &coords[c];
    Run *rs = runs[c];
    PyObject *bm = k->bm = slot(fm, md_f[c]), *last, *v;
    long long total = 0;
    k->nruns = 0;
    if (bm == NULL || Py_TYPE(bm) != md_binned || (v = slot(bm, md_b[B_WIDTH])) == NULL || !PyFloat_CheckExact(v)
        || !((k->width = PyFloat_AS_DOUBLE(v)) > 0.0) || !isfinite(k->width) || (k->bins = slot(bm, md_b[B_BINS])) == NULL
        || !PyDict_CheckExact(k->bins) || (v = slot(bm, md_b[B_N])) == NULL || !count_of(v, &k->n) || k->n < 0
        || (last = slot(bm, md_b[B_LAST])) == NULL || !PyFloat_CheckExact(last) || (v = slot(bm, md_b[B_RUN])) == NULL
        || !count_of(v, &k->run) || k->run < 0)
        return 0;
    long long run = k->run;
    for (Py_ssize_t r = 0; r < nrows; r++) {
        PyObject *x = PyTuple_GET_ITEM(PyList_GET_ITEM(rows, r), c);
        if (x == Py_None || (c >= F_ALT && !isfinite(PyFloat_AS_DOUBLE(x))))
            continue; /* h: `is not None`; alt, sep: `is not None and isfinite` */
        if (PyFloat_AS_DOUBLE(x) == PyFloat_AS_DOUBLE(last)) {
            run += 1;
            continue;
        }
        if (run)
            rs[k->nruns++] = (Run){last, run, NULL, 0.0, 0};
        last = x, run = 1;
    }
    k->last = last, k->run = run;
    /* each run's bin: an existing one of [int, float], or a new one within MAX_BINS */
    Py_ssize_t fresh = 0;
    for (Py_ssize_t r = 0; r < k->nruns; r++) {
        double f = floor(PyFloat_AS_DOUBLE(rs[r].x) / k->width);
        if (!isfinite(f) || rs[r].run >= COUNT_MAX || total > COUNT_MAX - rs[r].run) /* floor(): OverflowError */
            return 0;
        total += rs[r].run;
        if ((rs[r].key = PyLong_FromDouble(f)) == NULL)
            return -1;
        rs[r].f = f;
        PyObject *b = PyDict_GetItemWithError(k->bins, rs[r].key);
        long long cnt;
        if (b == NULL) {
            if (PyErr_Occurred())
                return -1;
            int seen = 0; /* a bin an earlier run of this batch makes: the same whole number f */
            for (Py_ssize_t q = 0; q < r && !seen; q++)
                seen = rs[q].fresh && rs[q].f == f;
            rs[r].fresh = !seen;
            fresh += !seen;
        } else if (!PyList_CheckExact(b) || PyList_GET_SIZE(b) != 2 || !count_of(PyList_GET_ITEM(b, 0), &cnt)
                   || cnt < 0 || cnt > COUNT_MAX - total || !PyFloat_CheckExact(PyList_GET_ITEM(b, 1)))
            return 0;
    }
    if (PyDict_GET_SIZE(k->bins) + fresh > md_max_bins || k->n > COUNT_MAX - total)
        return 0; /* a coarsening: the Python code's */
    return 1;
}

/* BinnedMedian.add_many's writes for coordinate c (planned): 0, or -1 with an error. */
static int apply_coord(int c)
{
    Coord *k = &coords[c];
    PyObject *bm = k->bm, *bins = k->bins, *nrun = PyLong_FromLongLong(k->run);
    if (nrun == NULL)
        return -1;
    /* the old _last may end the first run: held until the runs are binned */
    PyObject *old_last = Py_NewRef(slot(bm, md_b[B_LAST]));
    set_at(bm, md_b[B_LAST], Py_NewRef(k->last));
    set_at(bm, md_b[B_RUN], nrun);
    long long n = k->n;
    int rc = 0;
    for (Py_ssize_t r = 0; r < k->nruns && rc == 0; r++) {
        Run *u = &runs[c][r];
        double x = PyFloat_AS_DOUBLE(u->x), prod = x * (double)u->run; /* float * int: the int as a double */
        PyObject *b = PyDict_GetItemWithError(bins, u->key);
        if (b == NULL) {
            PyObject *cnt = PyErr_Occurred() ? NULL : PyLong_FromLongLong(u->run), *sum = PyFloat_FromDouble(prod);
            PyObject *row = cnt != NULL && sum != NULL ? PyList_New(2) : NULL;
            if (row != NULL) { /* [run, x * run] */
                PyList_SET_ITEM(row, 0, cnt);
                PyList_SET_ITEM(row, 1, sum);
                cnt = sum = NULL;
            }
            if (row == NULL || PyDict_SetItem(bins, u->key, row) < 0)
                rc = -1;
            Py_XDECREF(cnt);
            Py_XDECREF(sum);
            Py_XDECREF(row);
        } else if (put(b, 0, PyLong_FromLongLong(PyLong_AsLongLong(PyList_GET_ITEM(b, 0)) + u->run)) < 0
                   || put(b, 1, PyFloat_FromDouble(PyFloat_AS_DOUBLE(PyList_GET_ITEM(b, 1)) + prod)) < 0)
            rc = -1;
        n += u->run;
    }
    Py_DECREF(old_last);
    if (!k->nruns) /* no run ended: _put is not called */
        return rc;
    PyObject *nn = PyLong_FromLongLong(n); /* _put's finally: the count as far as it went */
    if (nn == NULL)
        return -1;
    set_at(bm, md_b[B_N], nn);
    return rc;
}

/* _FixMedians._settle in place: 1 done, 0 left to the Python method (nothing changed), -1 error. */
static int settle(PyObject *fm)
{
    PyObject *rows = slot(fm, md_f[F_PEND]);
    if (rows == NULL || !PyList_CheckExact(rows))
        return 0;
    Py_ssize_t nrows = PyList_GET_SIZE(rows);
    if (nrows == 0)
        return 1; /* `if not rows: return` */
    if (nrows > ROWS_MAX)
        return 0;
    for (Py_ssize_t r = 0; r < nrows; r++) {
        PyObject *row = PyList_GET_ITEM(rows, r);
        if (!PyTuple_CheckExact(row) || PyTuple_GET_SIZE(row) != 5)
            return 0;
        for (int c = 0; c < 5; c++) {
            PyObject *x = PyTuple_GET_ITEM(row, c);
            if (!PyFloat_CheckExact(x) && (c < F_H || x != Py_None))
                return 0;
        }
    }
    int rc = 1, c = 0;
    for (; c < 5 && rc == 1; c++)
        rc = plan_coord(fm, c, rows, nrows);
    for (int i = 0; i < 5 && rc == 1; i++) /* one median or bin dict in two places: planned apart, so not here */
        for (int j = i + 1; j < 5; j++)
            if (coords[i].bm == coords[j].bm || coords[i].bins == coords[j].bins)
                rc = 0;
    if (rc == 1) {
        PyObject *fresh = PyList_New(0);
        if (fresh == NULL) {
            rc = -1;
        } else {
            Py_INCREF(rows); /* the batch, held while it is taken */
            set_at(fm, md_f[F_PEND], fresh);
            for (int k = 0; k < 5 && rc == 1; k++)
                if (apply_coord(k) < 0)
                    rc = -1;
            Py_DECREF(rows);
        }
    }
    drop_keys(c);
    return rc;
}

PyObject *ep_median_epoch(PyObject *Py_UNUSED(mod), PyObject *const *args, Py_ssize_t nargs)
{
    if (!ep_ready(md_type != NULL))
        return NULL;
    if (nargs != 2) {
        PyErr_SetString(PyExc_TypeError, "median_epoch takes 2 arguments");
        return NULL;
    }
    PyObject *self = args[0], *ep = args[1], *d, *fn, *by_fix, *valid = NULL, *q, *fix, *m, *pend, *row;
    int rc = 0;
    if (Py_TYPE(self) != md_type || Py_TYPE(ep) != md_epoch)
        Py_RETURN_FALSE;
    if ((d = PyObject_GenericGetDict(self, NULL)) == NULL)
        return NULL;
    if ((fn = PyDict_GetItemWithError(d, md_s_valid)) == NULL || (by_fix = PyDict_GetItemWithError(d, md_s_by_fix))
        == NULL || !PyDict_CheckExact(by_fix))
        goto done;
    Py_INCREF(fn);
    valid = PyObject_CallOneArg(fn, ep);
    Py_DECREF(fn);
    if (valid == NULL) { /* the Python code meets it again, at its place */
        PyErr_Clear();
        goto done;
    }
    if (valid == Py_False) {
        rc = 1;
        goto done;
    }
    if (valid != Py_True || (q = slot(ep, md_ep[M_QUALITY])) == NULL || !PyLong_CheckExact(q))
        goto done;
    /* FIX_NAMES.get(ep.quality, "none"), then the fix type's medians (an exact int and str: no Python code) */
    if ((fix = PyDict_GetItemWithError(md_fix_names, q)) == NULL) {
        if (PyErr_Occurred())
            goto done;
        fix = md_none;
    }
    if (!PyUnicode_CheckExact(fix) || (m = PyDict_GetItemWithError(by_fix, fix)) == NULL || Py_TYPE(m) != md_fixm
        || (pend = slot(m, md_f[F_PEND])) == NULL || !PyList_CheckExact(pend))
        goto done;
    PyObject *c[5];
    for (int k = 0; k < 5; k++)
        if ((c[k] = slot(ep, md_ep[M_LAT + k])) == NULL)
            goto done;
    if ((row = PyTuple_Pack(5, c[0], c[1], c[2], c[3], c[4])) == NULL)
        goto done;
    rc = PyList_Append(pend, row) < 0 ? -1 : 1;
    Py_DECREF(row);
    if (rc == 1 && PyList_GET_SIZE(pend) >= md_batch) {
        Py_INCREF(m);
        int s = settle(m);
        if (s == 0) { /* the reference's own settle, right after the append as it does it */
            PyObject *r = PyObject_CallMethodNoArgs(m, md_s_settle);
            s = r == NULL ? -1 : 1;
            Py_XDECREF(r);
        }
        Py_DECREF(m);
        rc = s < 0 ? -1 : 1;
    }
done:
    if (rc == 0 && PyErr_Occurred()) /* a failed look-up (no memory) */
        rc = -1;
    Py_DECREF(d);
    Py_XDECREF(valid);
    return rc < 0 ? NULL : Py_NewRef(rc ? Py_True : Py_False);
}
