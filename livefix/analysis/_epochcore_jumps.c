/* livefix.analysis._epochcore: the settled case of livefix/analysis/jumps.py (Jumps.check) as
 * jumps_settled(); the module itself is in _epochcore.c.
 *
 * Why: nearly every epoch of a standing receiver is settled behaviour: its fix type's centre is warm,
 * its limits are cached, no excursion is open and the epoch lies within them, and Jumps.check then
 * only moves the centre (_Centre.add spelt out). That case is done here with the same float
 * operations in the same order (math.hypot is called as the Python code calls it: CPython's own
 * algorithm, not the C library's hypot; sqrt is correctly rounded in both). Anything else (a cold
 * centre, uncached limits, an open excursion, an epoch outside the limits, values or containers of
 * other types, a negative variance math.sqrt would refuse) returns False having changed nothing, and
 * the Python code does the whole check. tests/analysis/test_jumps_native.py compares the two.
 */
#include "_epochcore.h"

enum { C_N, C_C, C_VH, C_NU, C_VU, C_COUNT };
static const char *CENTRE_FIELDS[C_COUNT] = {"n", "c", "vh", "nu", "vu"};

/* module state, set by configure_jumps */
static PyTypeObject *jp_centre_type; /* jumps._Centre */
static Py_ssize_t jp_off[C_COUNT];
static long long jp_warmup;          /* jumps.WARMUP */
static double jp_ew_a;               /* jumps._EW_A */
static PyObject *jp_hypot;           /* math.hypot */
static PyObject *jp_s_centres, *jp_s_lims, *jp_s_open;

PyObject *ep_configure_jumps(PyObject *Py_UNUSED(mod), PyObject *args)
{
    PyObject *centre, *hyp;
    long long warmup;
    double ew_a;
    Py_ssize_t off[C_COUNT];
    if (!PyArg_ParseTuple(args, "O!LdO", &PyType_Type, &centre, &warmup, &ew_a, &hyp)
        || kit_slot_offsets(centre, CENTRE_FIELDS, C_COUNT, off, "%s is not a slot of %R") < 0)
        return NULL;
    if (!PyCallable_Check(hyp) || warmup < 0 || warmup > COUNT_MAX) {
        PyErr_SetString(PyExc_ValueError, "configure_jumps: a callable hypot and a warm-up of 0 or more");
        return NULL;
    }
    struct { PyObject **var; const char *name; } names[] = {
        {&jp_s_centres, "centres"}, {&jp_s_lims, "_lims"}, {&jp_s_open, "open"}};
    for (size_t k = 0; k < sizeof names / sizeof names[0]; k++)
        if (*names[k].var == NULL && (*names[k].var = PyUnicode_InternFromString(names[k].name)) == NULL)
            return NULL;
    memcpy(jp_off, off, sizeof off);
    Py_XSETREF(jp_centre_type, (PyTypeObject *)Py_NewRef(centre));
    Py_XSETREF(jp_hypot, Py_NewRef(hyp));
    jp_warmup = warmup;
    jp_ew_a = ew_a;
    Py_RETURN_NONE;
}

/* the exact float at o's slot f: 1 and its value, else 0 */
static int float_slot(PyObject *o, int f, double *out)
{
    PyObject *v = slot(o, jp_off[f]);
    if (v == NULL || !PyFloat_CheckExact(v))
        return 0;
    *out = PyFloat_AS_DOUBLE(v);
    return 1;
}

static void set_slot(PyObject *o, int f, PyObject *v) /* v stolen; the old value is an int or a float */
{
    PyObject **p = (PyObject **)((char *)o + jp_off[f]);
    PyObject *old = *p;
    *p = v;
    Py_XDECREF(old);
}

/* math.hypot(x, y) as Python computes it: -1 with an error set, else 0 */
static int py_hypot(double x, double y, double *out)
{
    PyObject *a[2] = {PyFloat_FromDouble(x), PyFloat_FromDouble(y)}, *r = NULL;
    if (a[0] != NULL && a[1] != NULL)
        r = PyObject_Vectorcall(jp_hypot, a, 2, NULL);
    Py_XDECREF(a[0]);
    Py_XDECREF(a[1]);
    if (r == NULL)
        return -1;
    int ok = PyFloat_CheckExact(r);
    *out = ok ? PyFloat_AS_DOUBLE(r) : 0.0;
    Py_DECREF(r);
    if (!ok)
        PyErr_SetString(PyExc_TypeError, "hypot must give a float");
    return ok ? 0 : -1;
}

PyObject *ep_jumps_settled(PyObject *Py_UNUSED(mod), PyObject *const *a, Py_ssize_t nargs)
{
    if (!ep_ready(jp_centre_type != NULL))
        return NULL;
    if (nargs != 5) {
        PyErr_SetString(PyExc_TypeError, "jumps_settled takes 5 arguments");
        return NULL;
    }
    PyObject *self = a[0], *fix = a[1], *centres = NULL, *lims_of = NULL, *open = NULL, *res = Py_False;
    PyObject *c, *lims, *cl, *nv[7] = {NULL, NULL, NULL, NULL, NULL, NULL, NULL};
    double e, n, u, k, lh, lv, vh, vu, c0, c1, c2, dh, dv;
    long long cn, nu;
    if (!PyUnicode_CheckExact(fix) || !PyFloat_CheckExact(a[2]) || !PyFloat_CheckExact(a[3])
        || !PyFloat_CheckExact(a[4]) || (centres = attr(self, jp_s_centres)) == NULL
        || (lims_of = attr(self, jp_s_lims)) == NULL || (open = attr(self, jp_s_open)) == NULL
        || !PyDict_CheckExact(centres) || !PyDict_CheckExact(lims_of) || !PyDict_CheckExact(open))
        goto done;
    e = PyFloat_AS_DOUBLE(a[2]), n = PyFloat_AS_DOUBLE(a[3]), u = PyFloat_AS_DOUBLE(a[4]);
    /* an exact str key: the look-ups run no Python code and cannot fail but for memory */
    if ((c = PyDict_GetItemWithError(centres, fix)) == NULL || Py_TYPE(c) != jp_centre_type
        || (lims = PyDict_GetItemWithError(lims_of, fix)) == NULL || PyDict_Contains(open, fix) != 0)
        goto done;
    if (!count_of(slot(c, jp_off[C_N]), &cn) || cn < jp_warmup || cn >= COUNT_MAX
        || !count_of(slot(c, jp_off[C_NU]), &nu) || nu < 0 || nu >= COUNT_MAX
        || !float_slot(c, C_VH, &vh) || !float_slot(c, C_VU, &vu) || vh < 0.0 || vu < 0.0
        || (cl = slot(c, jp_off[C_C])) == NULL || !PyList_CheckExact(cl) || PyList_GET_SIZE(cl) != 3
        || !PyFloat_CheckExact(PyList_GET_ITEM(cl, 0)) || !PyFloat_CheckExact(PyList_GET_ITEM(cl, 1))
        || !PyFloat_CheckExact(PyList_GET_ITEM(cl, 2)) || !PyTuple_CheckExact(lims) || PyTuple_GET_SIZE(lims) != 3
        || !num_of(PyTuple_GET_ITEM(lims, 0), &k) || !num_of(PyTuple_GET_ITEM(lims, 1), &lh)
        || !num_of(PyTuple_GET_ITEM(lims, 2), &lv))
        goto done;
    double sh = k * sqrt(vh), sv = k * sqrt(vu);
    if (sh > lh)
        lh = sh;
    if (sv > lv)
        lv = sv;
    c0 = PyFloat_AS_DOUBLE(PyList_GET_ITEM(cl, 0)), c1 = PyFloat_AS_DOUBLE(PyList_GET_ITEM(cl, 1));
    c2 = PyFloat_AS_DOUBLE(PyList_GET_ITEM(cl, 2));
    if (py_hypot(e - c0, n - c1, &dh) < 0) {
        res = NULL;
        goto done;
    }
    int uu = u == u;
    dv = uu && nu >= jp_warmup ? fabs(u - c2) : 0.0;
    if (dh > lh || dv > lv) /* out: an excursion opens, the Python code's part */
        goto done;
    /* settled: _Centre.add(e, n, u) as Jumps.check spells it out; every new value made first */
    double ca = 1.0 / (double)(cn + 1), de = e - c0, dn = n - c1;
    if (jp_ew_a > ca)
        ca = jp_ew_a;
    nv[0] = PyLong_FromLongLong(cn + 1);
    nv[1] = PyFloat_FromDouble(c0 + ca * de);
    nv[2] = PyFloat_FromDouble(c1 + ca * dn);
    nv[3] = PyFloat_FromDouble((1 - ca) * (vh + ca * (de * de + dn * dn)));
    if (uu) {
        double b = 1.0 / (double)(nu + 1), du = u - c2;
        if (jp_ew_a > b)
            b = jp_ew_a;
        nv[4] = PyFloat_FromDouble(c2 + b * du);
        nv[5] = PyFloat_FromDouble((1 - b) * (vu + b * du * du));
        nv[6] = PyLong_FromLongLong(nu + 1);
    }
    for (int i = 0; i < (uu ? 7 : 4); i++)
        if (nv[i] == NULL) {
            for (int j = 0; j < 7; j++)
                Py_XDECREF(nv[j]);
            res = NULL;
            goto done;
        }
    set_slot(c, C_N, nv[0]);
    put(cl, 0, nv[1]);
    put(cl, 1, nv[2]);
    set_slot(c, C_VH, nv[3]);
    if (uu) {
        set_slot(c, C_NU, nv[6]);
        put(cl, 2, nv[4]);
        set_slot(c, C_VU, nv[5]);
    }
    res = Py_True;
done:
    if (res == Py_False && PyErr_Occurred()) /* a failed look-up (no memory) */
        res = NULL;
    Py_XDECREF(centres);
    Py_XDECREF(lims_of);
    Py_XDECREF(open);
    return Py_XNewRef(res);
}
