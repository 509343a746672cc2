/* livefix.analysis._dopcore: livefix/analysis/dopsolve.py solve() and livefix/analysis/dop.py _used()
 * in C.
 *
 * Why: DopStats solves two DOP sets on every change of the used-satellite geometry; in Python the
 * closed form costs tens of microseconds, here about one. dopsolve.solve stays the reference: this
 * file does the very same float operations in the same order (built with -ffp-contract=off, no fast
 * math; sin, cos and sqrt are libm's, as CPython's math module uses), so results are bit-identical.
 *
 * Hand-over instead of error mirroring: solve(az, el, systems) takes exact lists or tuples of exact
 * floats or ints (|v| <= 2**53, converted exactly as math.radians does) and systems None or a list or
 * tuple of exact str, of equal lengths, at most MAX_CLOCKS distinct systems, every value finite. On
 * anything else it returns NotImplemented and dopsolve's wrapper runs the reference, so odd inputs
 * take exactly the reference's path (its result or its exception). Checks run in the reference's
 * order: lengths, systems, the count of unknowns (None before any value is looked at), the values.
 * used(sats, used_prns), dop.py's _used, is in _dopused.c, with the same hand-over rule.
 * tests/analysis/test_dop_solve.py compares both with the reference (float.hex, object identity).
 */
#include "_dopcore.h"

#define API 1
#define COND_MAX 1e12   /* dopsolve.COND_MAX */
#define MAX_CLOCKS 16   /* dopsolve.MAX_CLOCKS */
#define STACK_SATS 64   /* satellites solved without a heap buffer */

static const double DEG_TO_RAD = Py_MATH_PI / 180.0; /* as CPython's math.radians */

/* sin and cos through volatile pointers: the compiler may not fuse sin(a) and cos(a) into sincos(),
 * whose last bit is not promised to equal the separate calls that math.sin and math.cos make. */
static double (*volatile const sin_fn)(double) = sin;
static double (*volatile const cos_fn)(double) = cos;

static const char *KEY_NAMES[K_COUNT] = {"gdop", "pdop", "hdop", "vdop", "tdop"};

/* Clock index per satellite into the sorted distinct systems, as sorted(set(systems)): k, or -1
 * when systems are not all exact str or more than MAX_CLOCKS distinct ones. */
static int clocks_of(PyObject **sys, Py_ssize_t n, unsigned char *clock)
{
    PyObject *names[MAX_CLOCKS] = {NULL};
    int k = 0, rank[MAX_CLOCKS];
    for (Py_ssize_t i = 0; i < n; i++) {
        PyObject *s = sys[i];
        if (!PyUnicode_CheckExact(s))
            return -1;
        int c = 0;
        while (c < k && !same_str(names[c], s))
            c++;
        if (c == k) {
            if (k == MAX_CLOCKS)
                return -1;
            names[k++] = s;
        }
        clock[i] = (unsigned char)c;
    }
    dop_rank_names(names, k, rank);
    for (Py_ssize_t i = 0; i < n; i++)
        clock[i] = (unsigned char)rank[clock[i]];
    return k;
}

/* The dict of dopsolve.solve (same key order), or NULL with an error set. */
static PyObject *result(dop_state *st, const double v[K_COUNT])
{
    PyObject *d = PyDict_New();
    if (d == NULL)
        return NULL;
    for (int j = 0; j < K_COUNT; j++) {
        PyObject *f = PyFloat_FromDouble(v[j]);
        if (f == NULL || PyDict_SetItem(d, st->keys[j], f) < 0) {
            Py_XDECREF(f);
            Py_DECREF(d);
            return NULL;
        }
        Py_DECREF(f);
    }
    return d;
}

/* The solve of dopsolve.solve on validated values; 0 for None, 1 with out[] filled. */
static int solve_values(const unsigned char *clock, Py_ssize_t n, int k, double *buf, double out[K_COUNT])
{
    /* buf: 5n doubles, the line-of-sight E, N, U here, then the azimuths and elevations in degrees */
    double *ue = buf, *un = buf + n, *uu = buf + 2 * n;
    const double *azv = buf + 3 * n, *elv = buf + 4 * n;
    double se[MAX_CLOCKS], sn[MAX_CLOCKS], su[MAX_CLOCKS], me[MAX_CLOCKS], mn[MAX_CLOCKS], mu[MAX_CLOCKS];
    Py_ssize_t cnt[MAX_CLOCKS];
    for (int c = 0; c < k; c++) {
        cnt[c] = 0;
        se[c] = sn[c] = su[c] = 0.0;
    }
    for (Py_ssize_t i = 0; i < n; i++) {
        double a = azv[i] * DEG_TO_RAD;
        double e = elv[i] * DEG_TO_RAD;
        double ce = cos_fn(e);
        double x = ce * sin_fn(a);
        double y = ce * cos_fn(a);
        double z = sin_fn(e);
        ue[i] = x;
        un[i] = y;
        uu[i] = z;
        int c = clock[i];
        cnt[c] += 1;
        se[c] += x;
        sn[c] += y;
        su[c] += z;
    }
    for (int c = 0; c < k; c++) {
        me[c] = se[c] / (double)cnt[c];
        mn[c] = sn[c] / (double)cnt[c];
        mu[c] = su[c] / (double)cnt[c];
    }
    double s00 = 0.0, s10 = 0.0, s11 = 0.0, s20 = 0.0, s21 = 0.0, s22 = 0.0;
    for (Py_ssize_t i = 0; i < n; i++) {
        int c = clock[i];
        double x = ue[i] - me[c];
        double y = un[i] - mn[c];
        double z = uu[i] - mu[c];
        s00 += x * x;
        s10 += y * x;
        s11 += y * y;
        s20 += z * x;
        s21 += z * y;
        s22 += z * z;
    }
    double tiny = (double)n / COND_MAX;
    double d0 = s00;
    if (!(d0 > tiny))
        return 0;
    double l10 = s10 / d0;
    double l20 = s20 / d0;
    double d1 = s11 - l10 * s10;
    if (!(d1 > tiny))
        return 0;
    double t = s21 - l20 * s10;
    double l21 = t / d1;
    double d2 = s22 - l20 * s20 - l21 * t;
    if (!(d2 > tiny))
        return 0;
    double w10 = -l10;
    double w21 = -l21;
    double w20 = l10 * l21 - l20;
    double q22 = 1.0 / d2;
    double q11 = 1.0 / d1 + w21 * w21 / d2;
    double q00 = 1.0 / d0 + w10 * w10 / d1 + w20 * w20 / d2;
    double qh = q00 + q11;
    double qp = qh + q22;
    double qg = qp, qt = 0.0;
    for (int c = 0; c < k; c++) {
        double v0 = me[c];
        double v1 = mn[c] - l10 * v0;
        double v2 = mu[c] - l20 * v0 - l21 * v1;
        double q = 1.0 / (double)cnt[c] + v0 * v0 / d0 + v1 * v1 / d1 + v2 * v2 / d2;
        if (c == 0)
            qt = q;
        qg += q;
    }
    if ((double)n * qg >= COND_MAX)
        return 0;
    out[K_GDOP] = sqrt(qg);
    out[K_PDOP] = sqrt(qp);
    out[K_HDOP] = sqrt(qh);
    out[K_VDOP] = sqrt(q22);
    out[K_TDOP] = sqrt(qt);
    return 1;
}

/* solve(az, el, systems=None): the dict or None of dopsolve.solve, or NotImplemented (hand over). */
static PyObject *dop_solve(PyObject *module, PyObject *const *args, Py_ssize_t nargs)
{
    if (nargs < 2 || nargs > 3)
        Py_RETURN_NOTIMPLEMENTED;
    PyObject *az = args[0], *el = args[1], *systems = nargs == 3 ? args[2] : Py_None;
    if (!(PyList_CheckExact(az) || PyTuple_CheckExact(az)) || !(PyList_CheckExact(el) || PyTuple_CheckExact(el)))
        Py_RETURN_NOTIMPLEMENTED;
    Py_ssize_t n = PySequence_Fast_GET_SIZE(az);
    if (PySequence_Fast_GET_SIZE(el) != n)
        Py_RETURN_NOTIMPLEMENTED;
    if (n > (Py_ssize_t)(PY_SSIZE_T_MAX / (6 * (Py_ssize_t)sizeof(double))))
        Py_RETURN_NOTIMPLEMENTED;
    double stack_buf[5 * STACK_SATS];
    unsigned char stack_clock[STACK_SATS];
    double *buf = stack_buf;
    unsigned char *clock = stack_clock;
    void *heap = NULL;
    if (n > STACK_SATS) {
        heap = PyMem_Malloc((size_t)n * (5 * sizeof(double) + 1));
        if (heap == NULL)
            return PyErr_NoMemory();
        buf = (double *)heap;
        clock = (unsigned char *)(buf + 5 * n);
    }
    PyObject *ret = NULL;
    int k = 1;
    if (systems == Py_None) {
        memset(clock, 0, (size_t)n);
    } else if ((PyList_CheckExact(systems) || PyTuple_CheckExact(systems)) && PySequence_Fast_GET_SIZE(systems) == n) {
        k = clocks_of(PySequence_Fast_ITEMS(systems), n, clock);
        if (k < 0)
            goto hand_over;
    } else {
        goto hand_over;
    }
    if (n < 3 + k) {
        ret = Py_NewRef(Py_None);
        goto done;
    }
    PyObject **azs = PySequence_Fast_ITEMS(az), **els = PySequence_Fast_ITEMS(el);
    for (Py_ssize_t i = 0; i < n; i++) {
        if (!value_of(azs[i], &buf[3 * n + i]) || !value_of(els[i], &buf[4 * n + i]))
            goto hand_over;
    }
    double v[K_COUNT];
    if (solve_values(clock, n, k, buf, v))
        ret = result((dop_state *)PyModule_GetState(module), v);
    else
        ret = Py_NewRef(Py_None);
    goto done;
hand_over:
    ret = Py_NewRef(Py_NotImplemented);
done:
    PyMem_Free(heap);
    return ret;
}

static PyMethodDef dop_methods[] = {
    {"solve", (PyCFunction)(void (*)(void))dop_solve, METH_FASTCALL,
     "solve(az, el, systems=None): dopsolve.solve's dict or None, or NotImplemented for the reference."},
    {"used", (PyCFunction)(void (*)(void))dop_used, METH_FASTCALL,
     "used(sats, used_prns): dop._used's (geometry, used count), or NotImplemented for the reference."},
    {"configure", (PyCFunction)dop_configure, METH_O, "configure(SatObs): the satellite type used() reads."},
    {NULL, NULL, 0, NULL},
};

static int dop_traverse(PyObject *m, visitproc visit, void *arg)
{
    dop_state *st = (dop_state *)PyModule_GetState(m);
    for (int j = 0; j < K_COUNT; j++)
        Py_VISIT(st->keys[j]);
    Py_VISIT(st->sat_type);
    return 0;
}

static int dop_clear(PyObject *m)
{
    dop_state *st = (dop_state *)PyModule_GetState(m);
    for (int j = 0; j < K_COUNT; j++)
        Py_CLEAR(st->keys[j]);
    Py_CLEAR(st->sat_type);
    return 0;
}

static void dop_free(void *m)
{
    dop_clear((PyObject *)m);
}

static int dop_exec(PyObject *m)
{
    dop_state *st = (dop_state *)PyModule_GetState(m);
    for (int j = 0; j < K_COUNT; j++) {
        st->keys[j] = PyUnicode_InternFromString(KEY_NAMES[j]);
        if (st->keys[j] == NULL)
            return -1;
    }
    if (PyModule_AddIntConstant(m, "API", API) < 0 || PyModule_AddIntConstant(m, "MAX_CLOCKS", MAX_CLOCKS) < 0)
        return -1;
    PyObject *cond = PyFloat_FromDouble(COND_MAX);
    if (cond == NULL)
        return -1;
    if (PyModule_AddObject(m, "COND_MAX", cond) < 0) {
        Py_DECREF(cond);
        return -1;
    }
    return 0;
}

static PyModuleDef_Slot dop_slots[] = {
    {Py_mod_exec, (void *)dop_exec},
    {0, NULL},
};

static struct PyModuleDef dop_module = {
    PyModuleDef_HEAD_INIT, "livefix.analysis._dopcore",
    "The closed-form DOP solve of livefix/analysis/dopsolve.py in C (bit-identical).",
    sizeof(dop_state), dop_methods, dop_slots, dop_traverse, dop_clear, dop_free,
};

PyMODINIT_FUNC PyInit__dopcore(void)
{
    return PyModuleDef_Init(&dop_module);
}
