/* livefix.analysis._epochcore: the running-session case of StreamIntegrity.on_epoch
 * (livefix/analysis/integrity.py) as integrity_epoch(), with configure_integrity; the module itself is
 * in _epochcore.c, MedianPosition's step in _epochcore_median.c.
 *
 * Why: it runs every epoch and nearly every epoch is the same story: the stream integrity takes one
 * epoch interval into its windows (the host interval into
 * iv_host, the receiver interval into iv_nominal and its sorted copy, whose median is the nominal
 * interval). That case is done here with the same float operations in the same order, storing the
 * same Python objects (ep's own attributes, one float object for `dt = host` when the receiver time
 * gives no interval, srt[i] itself as the nominal interval of an odd window).
 *
 * Hand-over: everything is read and checked before anything is written. The first epoch, an epoch
 * after a stall (holes to place), a gap (an interval over GAP_FACTOR x nominal: an ISO time and a
 * listed gap), a NaN in the window, and any value or container of another
 * type: the function returns False having changed nothing and the Python code runs the reference.
 * tests/analysis/test_site_native.py compares the two step by step.
 */
#include "_epochcore.h"

enum { EP_MONO, EP_UTC, EP_DATE_KNOWN, EP_COUNT };
static const char *EP_FIELDS[EP_COUNT] = {"mono", "utc", "date_known"};
enum { I_EPOCHS, I_DATE_KNOWN, I_PREV, I_HOLES, I_NOMINAL, I_IV_HOST, I_IV_NOMINAL, I_IV_SORTED, I_IV_NAN,
       I_COUNT };
static const char *I_NAMES[I_COUNT] = {"epochs", "date_known", "prev", "_holes", "_nominal", "iv_host",
                                       "iv_nominal", "_iv_sorted", "_iv_nan"};

#define WINDOW_MAX (1 << 20) /* the longest interval window taken here (integrity.WINDOW is 256) */

/* module state, set by configure_integrity */
static PyTypeObject *it_type, *it_epoch, *it_deque;
static Py_ssize_t it_ep[EP_COUNT];
static Py_ssize_t it_window;      /* integrity.WINDOW */
static double it_gap_factor;      /* integrity.GAP_FACTOR */
static PyObject *it_names[I_COUNT], *it_append, *s_maxlen; /* it_append: deque.append */

static int intern_all(PyObject **vars, const char *const *names, int n)
{
    for (int k = 0; k < n; k++)
        if (vars[k] == NULL && (vars[k] = PyUnicode_InternFromString(names[k])) == NULL)
            return -1;
    return 0;
}

PyObject *ep_configure_integrity(PyObject *Py_UNUSED(mod), PyObject *args)
{
    PyObject *st, *epo, *dq;
    Py_ssize_t window, off[EP_COUNT];
    double gapf;
    if (!PyArg_ParseTuple(args, "O!O!O!nd", &PyType_Type, &st, &PyType_Type, &epo, &PyType_Type, &dq, &window, &gapf)
        || kit_slot_offsets(epo, EP_FIELDS, EP_COUNT, off, "%s is not a slot of %R") < 0)
        return NULL;
    if (window < 5 || window > WINDOW_MAX || !(gapf > 0.0)) {
        PyErr_SetString(PyExc_ValueError, "configure_integrity: a window of 5 to 2**20 and a gap factor above 0");
        return NULL;
    }
    PyObject *app;
    if (intern_all(it_names, I_NAMES, I_COUNT) < 0
        || (s_maxlen == NULL && (s_maxlen = PyUnicode_InternFromString("maxlen")) == NULL)
        || (app = PyObject_GetAttrString(dq, "append")) == NULL)
        return NULL;
    Py_XSETREF(it_append, app);
    memcpy(it_ep, off, sizeof off);
    Py_XSETREF(it_epoch, (PyTypeObject *)Py_NewRef(epo));
    Py_XSETREF(it_deque, (PyTypeObject *)Py_NewRef(dq));
    it_window = window, it_gap_factor = gapf;
    Py_XSETREF(it_type, (PyTypeObject *)Py_NewRef(st)); /* last: integrity_epoch's "configured" */
    Py_RETURN_NONE;
}

/* The instance dict's values of names[0..n) (borrowed): 1, 0 when one is missing, -1 on error. */
static int read_all(PyObject *d, PyObject *const *names, int n, PyObject **v)
{
    for (int k = 0; k < n; k++)
        if ((v[k] = PyDict_GetItemWithError(d, names[k])) == NULL)
            return PyErr_Occurred() ? -1 : 0;
    return 1;
}

static int is_float(PyObject *v, double *out)
{
    if (v == NULL || !PyFloat_CheckExact(v))
        return 0;
    *out = PyFloat_AS_DOUBLE(v);
    return 1;
}

static int append(PyObject *q, PyObject *x) /* deque.append(q, x) (q an exact deque): 0, or -1 with an error */
{
    PyObject *a[2] = {q, x}, *r = PyObject_Vectorcall(it_append, a, 2, NULL);
    Py_XDECREF(r);
    return r == NULL ? -1 : 0;
}

/* The window plan of StreamIntegrity._add_interval for a dt that is not NaN: the sorted copy less
 * srt[del] (bisect_left of the leaving value; -1: none leaves) plus dt at ins (insort: bisect_right),
 * and the nominal interval: median index `at` of the new sorted list (odd count) or the value `nom`.
 * Only the items the reference compares or reads are looked at (each must be an exact float), as
 * bisect and the median look at no others. */
typedef struct { Py_ssize_t del, ins, at, n; double nom; } Window;

/* item j of srt less srt[del]: 1 and its value, 0 when it is not an exact float */
static int less_del(PyObject *srt, Py_ssize_t del, Py_ssize_t j, double *out)
{
    return is_float(PyList_GET_ITEM(srt, del >= 0 && j >= del ? j + 1 : j), out);
}

/* item j of the new sorted list (srt less srt[del], dt at ins) */
static int new_item(PyObject *srt, const Window *w, double dt, Py_ssize_t j, double *out)
{
    if (j == w->ins) {
        *out = dt;
        return 1;
    }
    return less_del(srt, w->del, j < w->ins ? j : j - 1, out);
}

static int plan_window(PyObject *srt, Py_ssize_t qn, Py_ssize_t after, int full, double old, double dt, Window *w)
{
    Py_ssize_t lo = 0, hi = qn, m;
    double x, y;
    if (PyList_GET_SIZE(srt) != qn) /* the deque and its sorted copy parted: the Python code's business */
        return 0;
    w->del = -1;
    if (full) {
        while (lo < hi) { /* bisect_left(srt, old) */
            Py_ssize_t mid = (lo + hi) / 2;
            if (!is_float(PyList_GET_ITEM(srt, mid), &x))
                return 0;
            if (x < old)
                lo = mid + 1;
            else
                hi = mid;
        }
        if (lo >= qn) /* an IndexError in the Python code */
            return 0;
        w->del = lo;
    }
    m = full ? qn - 1 : qn;
    for (lo = 0, hi = m; lo < hi;) { /* insort: bisect_right(srt, dt) */
        Py_ssize_t mid = (lo + hi) / 2;
        if (!less_del(srt, w->del, mid, &x))
            return 0;
        if (dt < x)
            hi = mid;
        else
            lo = mid + 1;
    }
    w->ins = lo;
    w->n = m + 1;
    if (after != w->n)
        return 0;
    Py_ssize_t i = after / 2;
    w->at = after % 2 ? i : -1;
    if (!new_item(srt, w, dt, i, &x) || (!(after % 2) && !new_item(srt, w, dt, i - 1, &y)))
        return 0;
    w->nom = after % 2 ? x : 0.5 * (y + x);
    return 1;
}

PyObject *ep_integrity_epoch(PyObject *Py_UNUSED(mod), PyObject *const *args, Py_ssize_t nargs)
{
    if (!ep_ready(it_type != NULL))
        return NULL;
    if (nargs != 2) {
        PyErr_SetString(PyExc_TypeError, "integrity_epoch takes 2 arguments");
        return NULL;
    }
    PyObject *self = args[0], *ep = args[1], *d, *v[I_COUNT], *p, *hostv = NULL, *dtv = NULL, *ep_n = NULL;
    PyObject *nomv = NULL;
    int rc = 0;
    if (Py_TYPE(self) != it_type || Py_TYPE(ep) != it_epoch)
        Py_RETURN_FALSE;
    if ((d = PyObject_GenericGetDict(self, NULL)) == NULL)
        return NULL;
    long long epochs, nan_n;
    double mono, pm, nominal = 0.0, dt, host;
    if ((rc = read_all(d, it_names, I_COUNT, v)) != 1)
        goto done;
    rc = 0;
    if (!count_of(v[I_EPOCHS], &epochs) || epochs >= COUNT_MAX
        || Py_TYPE(p = v[I_PREV]) != it_epoch || Py_TYPE(v[I_HOLES]) != it_deque || PyObject_Size(v[I_HOLES]) != 0
        || (v[I_NOMINAL] != Py_None && !is_float(v[I_NOMINAL], &nominal)) || Py_TYPE(v[I_IV_HOST]) != it_deque
        || Py_TYPE(v[I_IV_NOMINAL]) != it_deque || !PyList_CheckExact(v[I_IV_SORTED])
        || !count_of(v[I_IV_NAN], &nan_n) || nan_n != 0 || !is_float(slot(ep, it_ep[EP_MONO]), &mono)
        || !is_float(slot(p, it_ep[EP_MONO]), &pm) || slot(ep, it_ep[EP_DATE_KNOWN]) == NULL)
        goto done;
    PyObject *utc = slot(ep, it_ep[EP_UTC]), *pu = slot(p, it_ep[EP_UTC]);
    double u = 0.0, uprev = 0.0;
    if ((utc != Py_None && !is_float(utc, &u)) || (pu != Py_None && !is_float(pu, &uprev)))
        goto done;
    dt = host = mono - pm;
    int from_utc = 0;
    if (utc != Py_None && pu != Py_None) {
        double du = u - uprev;
        if (0 < du && du < 3600)
            dt = du, from_utc = 1;
    }
    /* the window's plan (dt > 0: never NaN) */
    int take = dt > 0, shortcut = 0;
    Window w = {-1, -1, -1, 0, 0.0};
    if (take) {
        if (v[I_NOMINAL] != Py_None && dt > it_gap_factor * nominal)
            goto done; /* a gap (or a stall's hole): listed by the Python code */
        PyObject *q = v[I_IV_NOMINAL], *ml;
        Py_ssize_t qn = PyObject_Size(q), maxlen;
        if (qn < 0 || (ml = PyObject_GetAttr(q, s_maxlen)) == NULL)
            goto fail;
        maxlen = PyLong_CheckExact(ml) ? PyLong_AsSsize_t(ml) : -1;
        Py_DECREF(ml);
        if (maxlen == -1 && PyErr_Occurred())
            goto fail;
        if (maxlen != it_window || qn > it_window)
            goto done;
        double old = 0.0;
        if (qn == it_window) {
            PyObject *first = PySequence_GetItem(q, 0);
            if (first == NULL)
                goto fail;
            int ok = is_float(first, &old) && old == old;
            Py_DECREF(first);
            if (!ok)
                goto done;
            shortcut = old == dt;
        }
        if (!shortcut && (rc = plan_window(v[I_IV_SORTED], qn, qn == it_window ? qn : qn + 1, qn == it_window, old,
                                           dt, &w)) != 1)
            goto done;
        rc = 0;
    }
    /* every new object first, then the writes in the reference's order */
    if ((ep_n = PyLong_FromLongLong(epochs + 1)) == NULL)
        goto fail;
    if (take && ((hostv = PyFloat_FromDouble(host)) == NULL
                 || (dtv = from_utc ? PyFloat_FromDouble(dt) : Py_NewRef(hostv)) == NULL))
        goto fail;
    if (take && !shortcut && w.n >= 5 && w.at < 0 && (nomv = PyFloat_FromDouble(w.nom)) == NULL)
        goto fail;
    Py_INCREF(p); /* held while prev moves on */
    int bad = PyDict_SetItem(d, it_names[I_EPOCHS], ep_n) < 0
        || PyDict_SetItem(d, it_names[I_DATE_KNOWN], slot(ep, it_ep[EP_DATE_KNOWN])) < 0
        || PyDict_SetItem(d, it_names[I_PREV], ep) < 0;
    Py_DECREF(p);
    if (bad)
        goto fail;
    if (take) {
        PyObject *srt = v[I_IV_SORTED];
        if (append(v[I_IV_HOST], hostv) < 0 || append(v[I_IV_NOMINAL], dtv) < 0)
            goto fail;
        if (!shortcut) {
            if ((w.del >= 0 && PyList_SetSlice(srt, w.del, w.del + 1, NULL) < 0) || PyList_Insert(srt, w.ins, dtv) < 0)
                goto fail;
            PyObject *nom = w.n < 5 ? Py_None : w.at >= 0 ? PyList_GET_ITEM(srt, w.at) : nomv;
            if (PyDict_SetItem(d, it_names[I_NOMINAL], nom) < 0)
                goto fail;
        }
    }
    rc = 1;
    goto done;
fail:
    rc = -1;
done:
    if (rc == 0 && PyErr_Occurred()) /* a failed look-up (no memory) */
        rc = -1;
    Py_DECREF(d);
    Py_XDECREF(ep_n);
    Py_XDECREF(hostv);
    Py_XDECREF(dtv);
    Py_XDECREF(nomv);
    return rc < 0 ? NULL : Py_NewRef(rc ? Py_True : Py_False);
}
