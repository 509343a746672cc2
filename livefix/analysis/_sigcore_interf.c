/* livefix.analysis._sigcore: SignalStats._interference in C for step(), in the common case: no
 * episode open and none starting.
 *
 * Plan, then commit: the baselines of the epoch's signals, the drops and the forgetting of signals
 * gone are worked out first without changing anything (the drops and the set of signals seen live
 * in C arrays here, not in Python lists); then, when an episode would start (share and median drop
 * both past the threshold) or anything is unusual, nothing is changed and the caller runs the
 * Python method on the same state; otherwise the baselines are updated, created and forgotten
 * exactly as the reference does, in its order.
 *
 * Left to the Python method: an open episode (its baselines are frozen, its events are built
 * there), a signal listed twice in one epoch (the second sees the first's update), a key or
 * baseline entry of another shape, a measured drop that is nan (sorted() with nan depends on the
 * order), a count of -1 (1.0 / 0 raises there), more than SKY_MAX signals.
 *
 * "Seen" without a set: every signal of the epoch whose key is in `base` found its own entry list,
 * so a key of `base` is unseen exactly when its entry is none of the entries found (checked: the
 * entries matched while walking `base` must be as many as were found, else one list is held under
 * two keys and the Python method runs).
 */
#include "_sigcore.h"

#define SKY_MAX 4096

typedef struct {
    PyObject *b;   /* the baseline entry found (strong: allocations below may run a collection), or NULL */
    PyObject *key; /* a new baseline's key (strong), else NULL */
    double c, b0;  /* the C/N0; the new mean of a baseline found */
    long long bn;  /* its new count */
} Plan;

/* The entry lists found, by address (open addressing, cap a power of 2 over the entries) */
static size_t slot_of(PyObject **tab, size_t cap, PyObject *p)
{
    size_t j = ((size_t)p >> 4) & (cap - 1);
    while (tab[j] != NULL && tab[j] != p)
        j = (j + 1) & (cap - 1);
    return j;
}

/* A key whose hash and comparisons run no Python code: a tuple of exact builtin scalars. */
static int plain_key(PyObject *k)
{
    if (!PyTuple_CheckExact(k))
        return 0;
    for (Py_ssize_t i = 0; i < PyTuple_GET_SIZE(k); i++) {
        PyObject *x = PyTuple_GET_ITEM(k, i);
        if (!(PyUnicode_CheckExact(x) || PyLong_CheckExact(x) || PyFloat_CheckExact(x) || x == Py_None
              || PyBool_Check(x)))
            return 0;
    }
    return 1;
}

static int cmp_double(const void *a, const void *b)
{
    double x = *(const double *)a, y = *(const double *)b;
    return (x > y) - (x < y);
}

/* _median of the measured drops (no nan among them, so any sort gives sorted()'s values; -0.0 and
 * 0.0 may swap, which only the comparisons below see) */
static double median(double *s, Py_ssize_t n)
{
    if (n <= 64) /* a sky's worth: insertion sort, no allocation (glibc's qsort may allocate) */
        for (Py_ssize_t i = 1; i < n; i++) {
            double x = s[i];
            Py_ssize_t j = i;
            for (; j > 0 && s[j - 1] > x; j--)
                s[j] = s[j - 1];
            s[j] = x;
        }
    else
        qsort(s, (size_t)n, sizeof *s, cmp_double);
    return n % 2 ? s[n / 2] : 0.5 * (s[n / 2 - 1] + s[n / 2]);
}

int sig_interference(PyObject *self, PyObject *ep)
{
    PyObject *config = attr(self, N_CONFIG), *thr = config == NULL ? NULL : attr(config, N_THR);
    PyObject *base = attr(self, N_BASE), *active = attr(self, N_ACTIVE);
    PyObject *sats = eslot(ep, E_SATS), *t = eslot(ep, E_MONO); /* a tuple and a float (step()) */
    Py_ssize_t n = PyTuple_GET_SIZE(sats), np = 0, nm = 0, ndel = 0, found = 0;
    Plan *plan = NULL;
    double *meas = NULL, thrd, td = PyFloat_AS_DOUBLE(t);
    PyObject **tab = NULL, **del = NULL;
    long long drops = 0, big = 0; /* drops, and those of at least thr */
    size_t cap = 16;
    int r = 0;
    if (thr == NULL || base == NULL || active != Py_None || !num_of(thr, &thrd) || !PyDict_CheckExact(base)
        || n > SKY_MAX)
        goto done;
    while (cap < 2 * (size_t)n)
        cap *= 2;
    plan = PyMem_Calloc((size_t)n + 1, sizeof *plan);
    meas = PyMem_Malloc(((size_t)n + 1) * sizeof *meas);
    tab = PyMem_Calloc(cap, sizeof *tab);
    if (plan == NULL || meas == NULL || tab == NULL) {
        PyErr_NoMemory();
        r = -1;
        goto done;
    }
    /* -- plan: the reference's _baseline_sats with frozen False, nothing changed -- */
    for (Py_ssize_t i = 0; i < n; i++) {
        PyObject *v[F_COUNT], *s = PyTuple_GET_ITEM(sats, i);
        if (!fields_of(s, v) || !PyUnicode_CheckExact(v[F_SYSTEM]) || !PyLong_CheckExact(v[F_PRN])
            || !PyUnicode_CheckExact(v[F_SIGNAL]))
            goto done;
        double c = 0.0;
        if (v[F_CN0] != Py_None && !num_of(v[F_CN0], &c))
            goto done;
        int has_c = c > 0; /* `c and c > 0`: 0, negative and nan are None */
        PyObject *key = PyTuple_Pack(3, v[F_SYSTEM], v[F_PRN], v[F_SIGNAL]);
        if (key == NULL) {
            r = -1;
            goto done;
        }
        PyObject *b = PyDict_GetItemWithError(base, key); /* str and int keys: no Python code */
        if (b == NULL) {
            if (PyErr_Occurred() || !has_c) {
                r = PyErr_Occurred() ? -1 : 0;
                Py_DECREF(key);
                if (r < 0)
                    goto done;
                continue;
            }
            for (Py_ssize_t j = 0; j < np; j++) { /* the same new signal twice: the Python method's */
                int eq = plan[j].key == NULL ? 0 : PyObject_RichCompareBool(plan[j].key, key, Py_EQ);
                if (eq != 0) {
                    Py_DECREF(key);
                    r = eq < 0 ? -1 : 0;
                    goto done;
                }
            }
            plan[np].key = key;
            plan[np++].c = c;
            continue;
        }
        Py_DECREF(key);
        if (!entry_ok(b, "fif"))
            goto done;
        size_t j = slot_of(tab, cap, b);
        if (tab[j] != NULL)
            goto done; /* a signal listed twice (or one entry under two keys) */
        tab[j] = b;
        found++;
        double b0 = PyFloat_AS_DOUBLE(PyList_GET_ITEM(b, 0)), b2 = PyFloat_AS_DOUBLE(PyList_GET_ITEM(b, 2));
        long long bn = PyLong_AsLongLong(PyList_GET_ITEM(b, 1));
        if (bn == -1)
            goto done; /* 1.0 / (bn + 1) raises in the Python method */
        if (bn >= sig_base_min_n) {
            double d;
            if (has_c) {
                d = b0 - c;
                if (isnan(d))
                    goto done;
                meas[nm++] = d;
            }
            else if (td - b2 <= sig_lost_s) { /* lost lock recently */
                double x = b0 - sig_lost_cn0;
                d = x > thrd ? x : thrd; /* max(thr, x) */
            }
            else
                goto skip;
            drops++;
            big += d >= thrd;
        }
    skip:
        if (!has_c)
            continue;
        double a = sig_base_weight(bn, td, b2);
        plan[np].b = Py_NewRef(b);
        plan[np].b0 = b0 + a * (c - b0);
        plan[np++].bn = bn + 1;
    }
    /* -- the signals of base not seen: forgotten after FORGET_S, dropped while lost recently -- */
    if (PyDict_GET_SIZE(base) > found) {
        Py_ssize_t pos = 0, matched = 0;
        PyObject *k, *b;
        del = PyMem_Malloc(((size_t)PyDict_GET_SIZE(base) + 1) * sizeof *del);
        if (del == NULL) {
            PyErr_NoMemory();
            r = -1;
            goto done;
        }
        while (PyDict_Next(base, &pos, &k, &b)) {
            if (tab[slot_of(tab, cap, b)] == b) {
                matched++;
                continue;
            }
            if (!plain_key(k) || !entry_ok(b, "fif"))
                goto done;
            double age = td - PyFloat_AS_DOUBLE(PyList_GET_ITEM(b, 2));
            if (age > sig_forget_s)
                del[ndel++] = Py_NewRef(k);
            else if (age <= sig_lost_s && PyLong_AsLongLong(PyList_GET_ITEM(b, 1)) >= sig_base_min_n) {
                double x = PyFloat_AS_DOUBLE(PyList_GET_ITEM(b, 0)) - sig_lost_cn0;
                drops++;
                big += (x > thrd ? x : thrd) >= thrd;
            }
        }
        if (matched != found)
            goto done;
    }
    if (nm >= sig_min_measured) { /* the decision: an episode starting is the Python method's */
        double med = median(meas, nm), share = (double)big / (double)drops;
        if (share >= sig_share && med >= thrd)
            goto done;
    }
    /* -- commit, in the reference's order -- */
    r = -1;
    for (Py_ssize_t i = 0; i < np; i++) {
        Plan *p = &plan[i];
        if (p->key != NULL) {
            PyObject *e = Py_BuildValue("[diO]", p->c, 1, t);
            int x = e == NULL ? -1 : PyDict_SetItem(base, p->key, e);
            Py_XDECREF(e);
            if (x < 0)
                goto done;
        }
        else {
            if (put(p->b, 0, PyFloat_FromDouble(p->b0)) < 0 || put(p->b, 1, PyLong_FromLongLong(p->bn)) < 0
                || put(p->b, 2, Py_NewRef(t)) < 0)
                goto done;
        }
    }
    for (Py_ssize_t i = 0; i < ndel; i++)
        if (PyDict_DelItem(base, del[i]) < 0)
            goto done;
    r = 1;
done:
    if (plan != NULL)
        for (Py_ssize_t i = 0; i < np; i++) {
            Py_XDECREF(plan[i].key);
            Py_XDECREF(plan[i].b);
        }
    for (Py_ssize_t i = 0; i < ndel; i++)
        Py_DECREF(del[i]);
    PyMem_Free(plan);
    PyMem_Free(meas);
    PyMem_Free(tab);
    PyMem_Free(del);
    Py_XDECREF(config);
    Py_XDECREF(thr);
    Py_XDECREF(base);
    Py_XDECREF(active);
    return r;
}
