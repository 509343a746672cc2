/* livefix.analysis._epochcore: Track._settle (livefix/analysis/track.py) as ep_track_settle(), which
 * position_epoch calls when a track's batch is full, and track_settle() (tests, fuzz); configure_track.
 *
 * Why: every BATCH fixed epochs the waiting rows go into five accumulators: Moments3.add_rows (the
 * running mean and covariance, and each row's distance from the mean before it), two LogHistograms
 * (add_many), BlockMeans.add_rows, PairHistory.add3_rows (Allan history) and Ring.extend. In Python
 * that is about 2 us per epoch of interpreter work. Here the same float operations run in the same
 * order (math.hypot is called as the Python code calls it, log() is the C library's as math.log's,
 * round() is CPython's float rounding), the same objects and dict entries are stored in the same
 * order, and the accumulators' own Python methods run where the reference calls them (BlockMeans.flush,
 * PairHistory._flush, Ring._flush: once a block, a decimation step or 64 rows).
 *
 * Hand-over: everything is read and checked before anything is written: exact types (configured),
 * rows of exact floats, counters that are exact ints, lists of the expected lengths, two distinct
 * histograms. Anything else: track_settle changes nothing and returns False, and the caller runs the
 * reference. tests/analysis/test_track_native.py and bench/fuzz_track.py compare the two.
 */
#include "_epochcore_pos.h"

enum { K_MOM, K_HIST_R, K_HIST_V, K_RING, K_BLOCKS, K_ALLAN, K_PEND, K_COUNT };
static const char *TK_F[K_COUNT] = {"_mom", "_hist_r", "_hist_v", "_ring", "_blocks", "_allan", "_pend"};
enum { O_N, O_NU, O_M, O_C, O_COUNT };
static const char *MO_F[O_COUNT] = {"n", "nu", "m", "c"};
/* instance-dict names of the four plain classes, and the methods called */
enum { A_BINS, A_ZEROS, A_N, A_BLOCK_S, A_START, A_ACC, A_K, A_KU, A_FACTOR, A_PEND, A_CAP, A_NN, A_TOTAL,
       A_FLUSH, A_PFLUSH, A_COUNT };
static const char *A_NAMES[A_COUNT] = {"bins", "zeros", "n", "block_s", "_start", "_acc", "_k", "_ku", "factor",
    "_pend", "cap", "_n", "total", "flush", "_flush"};

#define ROWS_MAX 256 /* the longest batch settled here (track.BATCH is 64) */

static PyTypeObject *tk_type, *tk_mom, *tk_hist, *tk_blocks, *tk_pair, *tk_ring;
static Py_ssize_t tk_off[K_COUNT], tk_mo[O_COUNT];
static PyObject *tk_name[A_COUNT], *tk_hypot;
static long long tk_warmup, tk_flush;
static double tk_step;

PyObject *ep_configure_track(PyObject *Py_UNUSED(mod), PyObject *args)
{
    PyObject *ty[6], *hyp;
    long long warm, fl;
    double step;
    Py_ssize_t off[K_COUNT], mo[O_COUNT];
    const char *fmt = "%s is not a slot of %R";
    if (!PyArg_ParseTuple(args, "O!O!O!O!O!O!OLLd", &PyType_Type, &ty[0], &PyType_Type, &ty[1], &PyType_Type,
                          &ty[2], &PyType_Type, &ty[3], &PyType_Type, &ty[4], &PyType_Type, &ty[5], &hyp, &warm,
                          &fl, &step)
        || kit_slot_offsets(ty[0], TK_F, K_COUNT, off, fmt) < 0 || kit_slot_offsets(ty[1], MO_F, O_COUNT, mo, fmt) < 0)
        return NULL;
    if (!PyCallable_Check(hyp) || warm < 0 || warm > COUNT_MAX || fl < 1 || fl > COUNT_MAX || !(step > 0)) {
        PyErr_SetString(PyExc_ValueError, "configure_track: a callable hypot, WARMUP >= 0, FLUSH >= 1, STEP > 0");
        return NULL;
    }
    for (int k = 0; k < A_COUNT; k++)
        if (tk_name[k] == NULL && (tk_name[k] = PyUnicode_InternFromString(A_NAMES[k])) == NULL)
            return NULL;
    /* the four plain classes keep these names in their instance dicts: no class attribute may shadow one */
    static const int USED[4][7] = {{A_BINS, A_ZEROS, A_N, -1}, {A_BLOCK_S, A_START, A_ACC, A_K, A_KU, -1},
                                   {A_ACC, A_K, A_FACTOR, A_PEND, A_CAP, A_NN, -1}, {A_PEND, A_TOTAL, -1}};
    for (int t = 0; t < 4; t++)
        for (int j = 0; USED[t][j] >= 0; j++)
            if (_PyType_Lookup((PyTypeObject *)ty[t + 2], tk_name[USED[t][j]]) != NULL) {
                PyErr_Format(PyExc_TypeError, "configure_track: %R has a class attribute %U", ty[t + 2],
                             tk_name[USED[t][j]]);
                return NULL;
            }
    memcpy(tk_off, off, sizeof off);
    memcpy(tk_mo, mo, sizeof mo);
    PyTypeObject **dst[6] = {&tk_type, &tk_mom, &tk_hist, &tk_blocks, &tk_pair, &tk_ring};
    for (int t = 0; t < 6; t++)
        Py_XSETREF(*dst[t], (PyTypeObject *)Py_NewRef(ty[t]));
    Py_XSETREF(tk_hypot, Py_NewRef(hyp));
    tk_warmup = warm, tk_flush = fl, tk_step = step;
    Py_RETURN_NONE;
}

/* the instance dict of o when o is exactly of type t, else NULL */
static PyObject *plain_dict(PyObject *o, PyTypeObject *t)
{
    if (o == NULL || Py_TYPE(o) != t)
        return NULL;
    PyObject **dp = _PyObject_GetDictPtr(o);
    return dp != NULL && *dp != NULL && PyDict_CheckExact(*dp) ? *dp : NULL;
}

static PyObject *dget(PyObject *d, int name) /* borrowed; NULL when missing (no error kept) */
{
    PyObject *v = PyDict_GetItemWithError(d, tk_name[name]);
    if (v == NULL)
        PyErr_Clear();
    return v;
}

static int dcount(PyObject *d, int name, long long *out) { return counter(dget(d, name), out); }

/* an exact list of n exact floats, copied to out */
static int floats(PyObject *l, Py_ssize_t n, double *out)
{
    if (l == NULL || !PyList_CheckExact(l) || PyList_GET_SIZE(l) != n)
        return 0;
    for (Py_ssize_t k = 0; k < n; k++)
        if (!is_float(PyList_GET_ITEM(l, k), &out[k]))
            return 0;
    return 1;
}

static PyObject *float_list(const double *v, Py_ssize_t n)
{
    PyObject *l = PyList_New(n);
    for (Py_ssize_t k = 0; l != NULL && k < n; k++) {
        PyObject *f = PyFloat_FromDouble(v[k]);
        if (f == NULL)
            Py_CLEAR(l);
        else
            PyList_SET_ITEM(l, k, f);
    }
    return l;
}

static int dset(PyObject *d, int name, PyObject *v) /* v stolen */
{
    int r = v == NULL ? -1 : PyDict_SetItem(d, tk_name[name], v);
    Py_XDECREF(v);
    return r;
}

/* LogHistogram.add_many for one value: bins[round(log(x) / STEP)] += 1; 0 counted apart; negative,
 * NaN and infinite values are not counted (the reference's log() or round() raises for them) */
static int hist_add(PyObject *bins, double x, long long *zeros, long long *n)
{
    if (x > 0 && isfinite(x)) {
        double v = log(x) / tk_step, r = round(v);
        if (fabs(v - r) == 0.5) /* float.__round__: halfway cases to even */
            r = 2.0 * round(v / 2.0);
        PyObject *key = PyLong_FromDouble(r), *old, *one = NULL, *nv = NULL;
        if (key == NULL)
            return -1;
        old = PyDict_GetItemWithError(bins, key);
        if (old == NULL && !PyErr_Occurred())
            nv = PyLong_FromLong(1);
        else if (old != NULL && (one = PyLong_FromLong(1)) != NULL) {
            Py_INCREF(old); /* an odd count type could run code that changes the dict */
            nv = PyNumber_Add(old, one);
            Py_DECREF(old);
        }
        Py_XDECREF(one);
        int rc = nv == NULL ? -1 : PyDict_SetItem(bins, key, nv);
        Py_XDECREF(nv);
        Py_DECREF(key);
        if (rc < 0)
            return -1;
        ++*n;
    } else if (x == 0) {
        ++*zeros;
        ++*n;
    }
    return 0;
}

typedef struct {
    double t, e, n, u;
} Row;

/* what the settle reads, checked (borrowed references, alive while the track holds them) */
typedef struct {
    PyObject *rows, *mom, *dr, *dv, *db, *da, *dg, *blocks, *allan, *ring, *start, *apend, *rpend;
    long long n, nu, zr, nr, zv, nv, bk, bku, ak, factor, cap, total;
    double m[3], c[6], bacc[4], aacc[3], block_s;
} Seen;

/* 1 when every value the settle reads has the expected type and shape (nothing written), else 0 */
static int check(PyObject *trk, Seen *s, Row *r, PyObject **t_obj, Py_ssize_t nrows)
{
    for (Py_ssize_t i = 0; i < nrows; i++) {
        PyObject *row = PyList_GET_ITEM(s->rows, i);
        if (!PyTuple_CheckExact(row) || PyTuple_GET_SIZE(row) < 4 || !is_float(PyTuple_GET_ITEM(row, 0), &r[i].t)
            || !is_float(PyTuple_GET_ITEM(row, 1), &r[i].e) || !is_float(PyTuple_GET_ITEM(row, 2), &r[i].n)
            || !is_float(PyTuple_GET_ITEM(row, 3), &r[i].u))
            return 0;
        t_obj[i] = PyTuple_GET_ITEM(row, 0);
    }
    PyObject *mom = s->mom = slot(trk, tk_off[K_MOM]), *c, *bins_r, *bins_v;
    if (mom == NULL || Py_TYPE(mom) != tk_mom || !counter(slot(mom, tk_mo[O_N]), &s->n)
        || !counter(slot(mom, tk_mo[O_NU]), &s->nu) || !floats(slot(mom, tk_mo[O_M]), 3, s->m)
        || (c = slot(mom, tk_mo[O_C])) == NULL || !PyList_CheckExact(c) || PyList_GET_SIZE(c) != 6)
        return 0;
    for (int k = 0; k < 6; k++)
        if ((k == 0 || k == 1 || k == 3 || k == 5) && !is_float(PyList_GET_ITEM(c, k), &s->c[k]))
            return 0;
    PyObject *hr = slot(trk, tk_off[K_HIST_R]), *hv = slot(trk, tk_off[K_HIST_V]);
    if (hr == hv || (s->dr = plain_dict(hr, tk_hist)) == NULL || (s->dv = plain_dict(hv, tk_hist)) == NULL
        || (bins_r = dget(s->dr, A_BINS)) == NULL || !PyDict_CheckExact(bins_r) || (bins_v = dget(s->dv, A_BINS)) == NULL
        || !PyDict_CheckExact(bins_v) || bins_r == bins_v || !dcount(s->dr, A_ZEROS, &s->zr) || !dcount(s->dr, A_N, &s->nr)
        || !dcount(s->dv, A_ZEROS, &s->zv) || !dcount(s->dv, A_N, &s->nv))
        return 0;
    s->blocks = slot(trk, tk_off[K_BLOCKS]);
    s->allan = slot(trk, tk_off[K_ALLAN]);
    s->ring = slot(trk, tk_off[K_RING]);
    if ((s->db = plain_dict(s->blocks, tk_blocks)) == NULL || !is_float(dget(s->db, A_BLOCK_S), &s->block_s)
        || (s->start = dget(s->db, A_START)) == NULL || (s->start != Py_None && !PyFloat_CheckExact(s->start))
        || !floats(dget(s->db, A_ACC), 4, s->bacc) || !dcount(s->db, A_K, &s->bk) || !dcount(s->db, A_KU, &s->bku))
        return 0;
    if ((s->da = plain_dict(s->allan, tk_pair)) == NULL || !floats(dget(s->da, A_ACC), 3, s->aacc)
        || !dcount(s->da, A_K, &s->ak) || !dcount(s->da, A_FACTOR, &s->factor) || s->factor < 1
        || (s->apend = dget(s->da, A_PEND)) == NULL || !PyList_CheckExact(s->apend) || !dcount(s->da, A_CAP, &s->cap)
        || !counter(dget(s->da, A_NN), &(long long){0}))
        return 0;
    if ((s->dg = plain_dict(s->ring, tk_ring)) == NULL || (s->rpend = dget(s->dg, A_PEND)) == NULL
        || !PyList_CheckExact(s->rpend) || !dcount(s->dg, A_TOTAL, &s->total))
        return 0;
    /* no list that is written is another one that is read */
    return s->rows != s->apend && s->rows != s->rpend && s->apend != s->rpend;
}

/* Moments3.add_rows(rows, WARMUP) with the two LogHistogram.add_many of its distances */
static int moments(Seen *s, const Row *r, Py_ssize_t nrows)
{
    PyObject *bins_r = dget(s->dr, A_BINS), *bins_v = dget(s->dv, A_BINS);
    long long k = s->n, nu = s->nu, zr = s->zr, nr = s->nr, zv = s->zv, nv = s->nv;
    double m0 = s->m[0], m1 = s->m[1], m2 = s->m[2], c0 = s->c[0], c1 = s->c[1], c3 = s->c[3], c5 = s->c[5];
    Py_INCREF(bins_r);
    Py_INCREF(bins_v);
    int rc = 0;
    for (Py_ssize_t i = 0; i < nrows && rc == 0; i++) {
        double e = r[i].e, n = r[i].n, u = r[i].u, h;
        if (k >= tk_warmup) {
            rc = hypot_py(tk_hypot, e - m0, n - m1, &h);
            if (rc == 0)
                rc = hist_add(bins_r, h, &zr, &nr);
            if (rc == 0 && nu >= tk_warmup)
                rc = hist_add(bins_v, fabs(u - m2), &zv, &nv);
        }
        k += 1;
        double d0 = e - m0, d1 = n - m1;
        m0 += d0 / (double)k;
        m1 += d1 / (double)k;
        c0 += d0 * (e - m0);
        c1 += d0 * (n - m1);
        c3 += d1 * (n - m1);
        if (u == u) {
            nu += 1;
            double d2 = u - m2;
            m2 += d2 / (double)nu;
            c5 += d2 * (u - m2);
        }
    }
    Py_DECREF(bins_r);
    Py_DECREF(bins_v);
    if (rc < 0)
        return -1;
    PyObject *m = slot(s->mom, tk_mo[O_M]), *c = slot(s->mom, tk_mo[O_C]);
    double mv[3] = {m0, m1, m2}, cv[4] = {c0, c1, c3, c5};
    int ci[4] = {0, 1, 3, 5};
    if (sset(s->mom, tk_mo[O_N], PyLong_FromLongLong(k)) < 0 || sset(s->mom, tk_mo[O_NU], PyLong_FromLongLong(nu)) < 0)
        return -1;
    for (int j = 0; j < 7; j++) { /* m[0..2], then c[0], c[1], c[3], c[5]: in place, as the reference */
        PyObject *f = PyFloat_FromDouble(j < 3 ? mv[j] : cv[j - 3]);
        if (f == NULL || PyList_SetItem(j < 3 ? m : c, j < 3 ? j : ci[j - 3], f) < 0)
            return -1;
    }
    if (dset(s->dr, A_ZEROS, PyLong_FromLongLong(zr)) < 0 || dset(s->dr, A_N, PyLong_FromLongLong(nr)) < 0
        || dset(s->dv, A_ZEROS, PyLong_FromLongLong(zv)) < 0 || dset(s->dv, A_N, PyLong_FromLongLong(nv)) < 0)
        return -1;
    return 0;
}

/* BlockMeans: _acc, _k, _ku written back (before its flush() and at the end) */
static int block_state(Seen *s, const double *a, long long k, long long ku)
{
    return dset(s->db, A_ACC, float_list(a, 4)) < 0 || dset(s->db, A_K, PyLong_FromLongLong(k)) < 0
        || dset(s->db, A_KU, PyLong_FromLongLong(ku)) < 0 ? -1 : 0;
}

/* BlockMeans.add_rows(rows) */
static int blocks(Seen *s, const Row *r, PyObject *const *t_obj, Py_ssize_t nrows)
{
    PyObject *start = Py_NewRef(s->start);
    double a[4] = {s->bacc[0], s->bacc[1], s->bacc[2], s->bacc[3]}, st = start == Py_None ? 0 : PyFloat_AS_DOUBLE(start);
    long long k = s->bk, ku = s->bku;
    for (Py_ssize_t i = 0; i < nrows; i++) {
        if (start == Py_None) {
            Py_SETREF(start, Py_NewRef(t_obj[i]));
            st = r[i].t;
        } else if (r[i].t - st >= s->block_s) {
            if (block_state(s, a, k, ku) < 0 || call_void(s->blocks, tk_name[A_FLUSH]) < 0) {
                Py_DECREF(start);
                return -1;
            }
            a[0] = a[1] = a[2] = a[3] = 0.0;
            k = ku = 0;
            Py_SETREF(start, Py_NewRef(t_obj[i]));
            st = r[i].t;
        }
        a[0] += r[i].t;
        a[1] += r[i].e;
        a[2] += r[i].n;
        if (r[i].u == r[i].u) {
            a[3] += r[i].u;
            ku += 1;
        }
        k += 1;
    }
    if (dset(s->db, A_START, start) < 0) /* start stolen */
        return -1;
    return block_state(s, a, k, ku);
}

/* a counter of d read again after a Python call (a TypeError if it stopped being one) */
static int recount(PyObject *d, int name, long long *out)
{
    if (dcount(d, name, out))
        return 0;
    PyErr_Format(PyExc_TypeError, "track settle: %U is no longer a count", tk_name[name]);
    return -1;
}

/* PairHistory.add3_rows(rows, E): e, n, u of each row */
static int allan(Seen *s, const Row *r, Py_ssize_t nrows)
{
    double a0 = s->aacc[0], a1 = s->aacc[1], a2 = s->aacc[2];
    long long k = s->ak, f = s->factor, nn;
    PyObject *p = Py_NewRef(s->apend);
    int rc = 0;
    for (Py_ssize_t i = 0; i < nrows && rc == 0; i++) {
        a0 += r[i].e;
        a1 += r[i].n;
        a2 += r[i].u;
        k += 1;
        if (k < f)
            continue;
        PyObject *row = Py_BuildValue("(ddd)", a0 / (double)k, a1 / (double)k, a2 / (double)k);
        rc = row == NULL ? -1 : PyList_Append(p, row);
        Py_XDECREF(row);
        a0 = a1 = a2 = 0.0;
        k = 0;
        if (rc == 0)
            rc = recount(s->da, A_NN, &nn);
        if (rc == 0 && (PyList_GET_SIZE(p) >= tk_flush || nn + PyList_GET_SIZE(p) == s->cap)) {
            rc = call_void(s->allan, tk_name[A_PFLUSH]);
            if (rc == 0)
                rc = recount(s->da, A_FACTOR, &f);
        }
    }
    Py_DECREF(p);
    double acc[3] = {a0, a1, a2};
    if (rc < 0 || dset(s->da, A_ACC, float_list(acc, 3)) < 0 || dset(s->da, A_K, PyLong_FromLongLong(k)) < 0)
        return -1;
    return 0;
}

/* Ring.extend(rows) */
static int ring(Seen *s, Py_ssize_t nrows)
{
    PyObject *p = s->rpend;
    Py_ssize_t len = PyList_GET_SIZE(p);
    if (PyList_SetSlice(p, len, len, s->rows) < 0 || dset(s->dg, A_TOTAL, PyLong_FromLongLong(s->total + nrows)) < 0)
        return -1;
    return PyList_GET_SIZE(p) >= tk_flush ? call_void(s->ring, tk_name[A_PFLUSH]) : 0;
}

/* Track._settle: 1 done, 0 handed back (nothing changed), -1 with an error set */
int ep_track_settle(PyObject *trk)
{
    if (tk_type == NULL || trk == NULL || Py_TYPE(trk) != tk_type)
        return 0;
    Seen s = {0};
    s.rows = slot(trk, tk_off[K_PEND]);
    if (s.rows == NULL || !PyList_CheckExact(s.rows))
        return 0;
    Py_ssize_t nrows = PyList_GET_SIZE(s.rows);
    if (nrows == 0)
        return 1; /* the reference returns at once */
    Row r[ROWS_MAX];
    PyObject *t_obj[ROWS_MAX];
    if (nrows > ROWS_MAX || !check(trk, &s, r, t_obj, nrows))
        return 0;
    /* from here on, as the reference: the track takes a new list, the accumulators the old one's rows */
    PyObject *hold[7] = {s.rows, s.mom, s.dr, s.dv, s.blocks, s.allan, s.ring};
    for (int k = 0; k < 7; k++)
        Py_INCREF(hold[k]);
    Py_INCREF(s.db);
    Py_INCREF(s.da);
    Py_INCREF(s.dg);
    int rc = sset(trk, tk_off[K_PEND], PyList_New(0));
    if (rc == 0)
        rc = moments(&s, r, nrows);
    if (rc == 0)
        rc = blocks(&s, r, t_obj, nrows);
    if (rc == 0)
        rc = allan(&s, r, nrows);
    if (rc == 0)
        rc = ring(&s, nrows);
    for (int k = 0; k < 7; k++)
        Py_DECREF(hold[k]);
    Py_DECREF(s.db);
    Py_DECREF(s.da);
    Py_DECREF(s.dg);
    return rc < 0 ? -1 : 1;
}

PyObject *ep_track_settle_py(PyObject *Py_UNUSED(mod), PyObject *trk)
{
    if (!ep_ready(tk_type != NULL))
        return NULL;
    int r = ep_track_settle(trk);
    return r < 0 ? NULL : Py_NewRef(r ? Py_True : Py_False);
}
