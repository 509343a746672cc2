/* The used-satellite pass of livefix/analysis/dop.py _used(ep) in C, part of livefix.analysis._dopcore
 * (see _dopcore.c for the hand-over rule). Why: it runs whenever the satellite tuple changes (about
 * once a second) and costs ~13 microseconds in Python with ~40 signals in view.
 *
 * used(sats, used_prns) takes SatObs (the type handed over once by configure()) with an exact bool
 * `used`, exact str systems, exact int prns (|prn| < 2**39), az/el None, exact int (|v| <= 2**53) or
 * exact float, at most MAX_SATS satellites and listed pairs and MAX_SYSTEMS systems, and used_prns
 * an exact tuple of exact (str, int) tuples; anything else returns NotImplemented (the reference
 * runs). Keys (system, prn) are packed into one integer, so set and dict lookups become compares.
 */
#include "_dopcore.h"

#define MAX_SATS 256    /* satellites and listed pairs taken (more: hand over) */
#define MAX_SYSTEMS DOP_MAX_NAMES /* distinct systems taken */
#define PRN_BIAS (1LL << 39) /* a key is system index << 40 | (prn + PRN_BIAS) */

static const char *U_NAMES[U_COUNT] = {"system", "prn", "elev", "azim", "used"};

void dop_rank_names(PyObject *const *names, int k, int *rank)
{
    int order[DOP_MAX_NAMES];
    for (int a = 0; a < k; a++) { /* insertion sort of indices; PyUnicode_Compare: code points */
        int b = a;
        while (b > 0 && PyUnicode_Compare(names[order[b - 1]], names[a]) > 0) {
            order[b] = order[b - 1];
            b--;
        }
        order[b] = a;
    }
    for (int r = 0; r < k; r++)
        rank[order[r]] = r;
}

/* configure(SatObs): the satellite type whose slots used() reads. */
PyObject *dop_configure(PyObject *module, PyObject *type)
{
    dop_state *st = (dop_state *)PyModule_GetState(module);
    Py_ssize_t off[U_COUNT];
    if (!PyType_Check(type))
        return PyErr_Format(PyExc_TypeError, "configure() takes the satellite type");
    if (kit_slot_offsets(type, U_NAMES, U_COUNT, off, "%s is not an object slot") < 0)
        return NULL;
    Py_XSETREF(st->sat_type, (PyTypeObject *)Py_NewRef(type));
    memcpy(st->off, off, sizeof(off));
    Py_RETURN_NONE;
}

/* The index of system string s among names (added when new), or -1 (not exact str, or too many). */
static int system_index(PyObject *s, PyObject **names, int *nsys)
{
    if (!PyUnicode_CheckExact(s))
        return -1;
    for (int c = 0; c < *nsys; c++)
        if (same_str(names[c], s))
            return c;
    if (*nsys == MAX_SYSTEMS)
        return -1;
    names[*nsys] = s;
    return (*nsys)++;
}

/* The key of (system, prn), or -1 when they are not taken. */
static long long key_of(PyObject *system, PyObject *prn, PyObject **names, int *nsys)
{
    if (!PyLong_CheckExact(prn))
        return -1;
    int over = 0;
    long long p = PyLong_AsLongLongAndOverflow(prn, &over);
    int c = system_index(system, names, nsys);
    if (over || p >= PRN_BIAS || p < -PRN_BIAS || c < 0)
        return -1;
    return ((long long)c << 40) | (p + PRN_BIAS);
}

static int has_key(const long long *keys, Py_ssize_t n, long long k)
{
    for (Py_ssize_t i = 0; i < n; i++)
        if (keys[i] == k)
            return 1;
    return 0;
}

/* float(v) for None-checked az/el: exact float (itself), exact int (|v| <= 2**53); else NULL, no error. */
static PyObject *as_float(PyObject *v, int make)
{
    double x;
    if (PyFloat_CheckExact(v))
        return make ? Py_NewRef(v) : v;
    if (!PyLong_CheckExact(v) || !value_of(v, &x))
        return NULL;
    return make ? PyFloat_FromDouble(x) : v;
}

/* used(sats, used_prns): (geometry, used count) of dop._used, or NotImplemented (hand over). */
PyObject *dop_used(PyObject *module, PyObject *const *args, Py_ssize_t nargs)
{
    dop_state *st = (dop_state *)PyModule_GetState(module);
    if (nargs != 2 || st->sat_type == NULL || !PyTuple_CheckExact(args[0]) || !PyTuple_CheckExact(args[1]))
        Py_RETURN_NOTIMPLEMENTED;
    PyObject *sats = args[0], *listed_t = args[1];
    Py_ssize_t n = PyTuple_GET_SIZE(sats), m = PyTuple_GET_SIZE(listed_t);
    if (n > MAX_SATS || m > MAX_SATS)
        Py_RETURN_NOTIMPLEMENTED;
    PyObject *names[MAX_SYSTEMS] = {NULL};
    int nsys = 0;
    long long listed[MAX_SATS], flagged[2 * MAX_SATS], seen[MAX_SATS];
    PyObject *seen_obj[MAX_SATS][3]; /* az, el, system (borrowed) */
    Py_ssize_t nflag = 0, nseen = 0;
    for (Py_ssize_t j = 0; j < m; j++) {
        PyObject *pair = PyTuple_GET_ITEM(listed_t, j);
        if (!PyTuple_CheckExact(pair) || PyTuple_GET_SIZE(pair) != 2)
            Py_RETURN_NOTIMPLEMENTED;
        if ((listed[j] = key_of(PyTuple_GET_ITEM(pair, 0), PyTuple_GET_ITEM(pair, 1), names, &nsys)) < 0)
            Py_RETURN_NOTIMPLEMENTED;
    }
    for (Py_ssize_t i = 0; i < n; i++) {
        PyObject *s = PyTuple_GET_ITEM(sats, i), *v[U_COUNT];
        if (Py_TYPE(s) != st->sat_type)
            Py_RETURN_NOTIMPLEMENTED;
        for (int f = 0; f < U_COUNT; f++)
            if ((v[f] = *(PyObject **)((char *)s + st->off[f])) == NULL)
                Py_RETURN_NOTIMPLEMENTED;
        if (v[U_USED] != Py_True && v[U_USED] != Py_False)
            Py_RETURN_NOTIMPLEMENTED;
        int used = v[U_USED] == Py_True;
        if (!used && m == 0) /* neither flagged nor possibly listed */
            continue;
        long long k = key_of(v[U_SYSTEM], v[U_PRN], names, &nsys);
        if (k < 0)
            Py_RETURN_NOTIMPLEMENTED;
        if (used && !has_key(flagged, nflag, k))
            flagged[nflag++] = k;
        if (has_key(seen, nseen, k) || !(used || has_key(listed, m, k)))
            continue;
        PyObject *az = v[U_AZIM], *el = v[U_ELEV];
        if (el == Py_None || az == Py_None) /* the first listed signal that has a direction */
            continue;
        if (as_float(az, 0) == NULL || as_float(el, 0) == NULL)
            Py_RETURN_NOTIMPLEMENTED;
        seen[nseen] = k;
        seen_obj[nseen][0] = az;
        seen_obj[nseen][1] = el;
        seen_obj[nseen][2] = v[U_SYSTEM];
        nseen++;
    }
    for (Py_ssize_t j = 0; j < m; j++)
        if (!has_key(flagged, nflag, listed[j]))
            flagged[nflag++] = listed[j];
    int rank[MAX_SYSTEMS]; /* sorted by (system, prn): system index -> rank, then insertion sort */
    dop_rank_names(names, nsys, rank);
    Py_ssize_t idx[MAX_SATS];
    long long sk[MAX_SATS];
    for (Py_ssize_t a = 0; a < nseen; a++) {
        long long key = ((long long)rank[seen[a] >> 40] << 40) | (seen[a] & ((1LL << 40) - 1));
        Py_ssize_t b = a;
        while (b > 0 && sk[b - 1] > key) {
            sk[b] = sk[b - 1];
            idx[b] = idx[b - 1];
            b--;
        }
        sk[b] = key;
        idx[b] = a;
    }
    PyObject *geo = PyTuple_New(nseen);
    if (geo == NULL)
        return NULL;
    for (Py_ssize_t a = 0; a < nseen; a++) {
        PyObject **o = seen_obj[idx[a]];
        PyObject *az = as_float(o[0], 1), *el = az ? as_float(o[1], 1) : NULL;
        PyObject *t = el ? PyTuple_New(3) : NULL;
        if (t == NULL) {
            Py_XDECREF(az);
            Py_XDECREF(el);
            Py_DECREF(geo);
            return NULL;
        }
        PyTuple_SET_ITEM(t, 0, az);
        PyTuple_SET_ITEM(t, 1, el);
        PyTuple_SET_ITEM(t, 2, Py_NewRef(o[2]));
        PyTuple_SET_ITEM(geo, a, t);
    }
    PyObject *count = PyLong_FromSsize_t(nflag);
    if (count == NULL) {
        Py_DECREF(geo);
        return NULL;
    }
    PyObject *ret = PyTuple_Pack(2, geo, count);
    Py_DECREF(geo);
    Py_DECREF(count);
    return ret;
}
