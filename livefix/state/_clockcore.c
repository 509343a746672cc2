/* C twin of the common path of livefix.state.clock.UtcClock.resolve.
 *
 * Why a method and not a type: the clock keeps every attribute in its own __dict__, exactly as the
 * reference does, and this method reads and writes them there. One epoch after another the clock
 * takes the common path: a known date (the receiver's, unchanged, or carried on without one), the
 * remembered day start and host date, no jump held, the time stepping on by a normal interval. That
 * path is done here; every other case (a first date, midnight, a date change or a default date, a
 * jump, a step back, a hole in the data, a cache miss, an odd type) calls the Python reference on
 * the untouched clock, so the rare paths have one implementation only. Nothing is written before
 * the whole path is known to be the common one.
 *
 * The float operations are the reference's, in its order: day start + time of day, utc - last,
 * the median of the recent steps (sorted, stable), max(2, 10 * median).
 */
#define PY_SSIZE_T_CLEAN
#include <Python.h>
#include <datetime.h>
#include <math.h>
#include <stddef.h>

/* the reference's constants (livefix.dates, livefix.timefmt, livefix.state.clock); clock.py checks them */
#define UNDATED_BEFORE 315964800.0 /* timefmt.UNDATED_BEFORE: GPS time starts 1980-01-06 */
#define HALF_DAY_S 43200.0         /* clock._DAY / 2 */
#define JUMP_FACTOR 10.0
#define JUMP_MIN_S 2.0
#define MAX_STEPS 64 /* more remembered steps than this (the reference keeps 15): the reference does it */

enum { A_DATE, A_LAST_TOD, A_GIVEN, A_BAD, A_DATE_BAD, A_LAST_UTC, A_LAST_MONO, A_JUMP, A_STEPS, A_NOMINAL,
       A_PROBLEMS, A_MIDNIGHT, A_HOST, A_DATE_KNOWN, NATTR };
static const char *const ATTR[NATTR] = {"date", "_last_tod", "_given", "_bad", "_date_bad", "last_utc", "_last_mono",
                                        "_jump", "_steps", "_nominal", "_problems", "_midnight", "_host", "date_known"};
static PyObject *S_attr[NATTR]; /* the same, interned once */
static PyObject *S_append;

typedef struct {
    PyObject_HEAD
    vectorcallfunc vectorcall;
    PyObject *ref;      /* the Python reference, UtcClock.resolve (a plain function) */
    PyTypeObject *cls;  /* the one class this method serves: a subclass may change any helper */
    PyTypeObject *deque; /* collections.deque */
} Resolver;

static int same_day(PyObject *a, PyObject *b)
{
    return PyDateTime_GET_YEAR(a) == PyDateTime_GET_YEAR(b) && PyDateTime_GET_MONTH(a) == PyDateTime_GET_MONTH(b)
           && PyDateTime_GET_DAY(a) == PyDateTime_GET_DAY(b);
}

/* UtcClock.nominal_s from the remembered steps: the median (1 s when none), by the reference's
 * sorted() and indexing; 0 when the steps are not all plain floats (the reference decides) */
static int median_step(Resolver *r, PyObject *steps, double *out)
{
    if (Py_TYPE(steps) != r->deque) return 0;
    Py_ssize_t k = PyObject_Size(steps);
    if (k < 0 || k > MAX_STEPS) {
        PyErr_Clear();
        return 0;
    }
    double s[MAX_STEPS];
    PyObject *it = PyObject_GetIter(steps), *x;
    if (it == NULL) {
        PyErr_Clear();
        return 0;
    }
    Py_ssize_t n = 0;
    int ok = 1;
    while ((x = PyIter_Next(it)) != NULL) {
        if (n < k && PyFloat_CheckExact(x) && !isnan(PyFloat_AS_DOUBLE(x))) {
            double v = PyFloat_AS_DOUBLE(x);
            Py_ssize_t i = n++;
            for (; i > 0 && v < s[i - 1]; i--) s[i] = s[i - 1]; /* stable insertion: as sorted() */
            s[i] = v;
        } else
            ok = 0;
        Py_DECREF(x);
    }
    Py_DECREF(it);
    if (PyErr_Occurred() || n != k) {
        PyErr_Clear();
        ok = 0;
    }
    if (ok) *out = k == 0 ? 1.0 : (k % 2 ? s[k / 2] : (s[k / 2 - 1] + s[k / 2]) / 2);
    return ok;
}

/* The common path; 1 with *result set, 0 to leave the call to the reference, -1 on an error. */
static int fast(Resolver *r, PyObject *const *args, Py_ssize_t nargs, PyObject **result)
{
    PyObject *self = args[0], *tod = args[1], *given = args[2], *wall = args[3];
    PyObject *mono = nargs == 5 ? args[4] : Py_None;
    if (Py_TYPE(self) != r->cls || !PyFloat_CheckExact(tod) || (given != Py_None && !PyDate_CheckExact(given))
        || (wall != Py_None && !PyFloat_CheckExact(wall)) || (mono != Py_None && !PyFloat_CheckExact(mono)))
        return 0;
    PyObject *dict = PyObject_GenericGetDict(self, NULL);
    if (dict == NULL) {
        PyErr_Clear();
        return 0;
    }
    PyObject *a[NATTR], *key = NULL;
    int ret = 0;
    if (!PyDict_CheckExact(dict)) goto done;
    for (int i = 0; i < NATTR; i++) {
        a[i] = PyDict_GetItemWithError(dict, S_attr[i]); /* borrowed; the dict holds them during the call */
        if (a[i] == NULL) {
            PyErr_Clear();
            goto done;
        }
    }
    double t = PyFloat_AS_DOUBLE(tod);
    if (a[A_DATE_BAD] != Py_True && a[A_DATE_BAD] != Py_False) goto done;
    int date_bad = a[A_DATE_BAD] == Py_True;

    /* host = self._host_date(wall) if date_known(wall) else None: only the remembered day */
    PyObject *host = Py_None;
    if (wall != Py_None && PyFloat_AS_DOUBLE(wall) >= UNDATED_BEFORE) {
        PyObject *h = a[A_HOST];
        if (!PyTuple_CheckExact(h) || PyTuple_GET_SIZE(h) != 3 || !PyFloat_CheckExact(PyTuple_GET_ITEM(h, 0))
            || !PyFloat_CheckExact(PyTuple_GET_ITEM(h, 1)) || PyTuple_GET_ITEM(h, 2) == Py_None)
            goto done;
        double w = PyFloat_AS_DOUBLE(wall);
        if (!(PyFloat_AS_DOUBLE(PyTuple_GET_ITEM(h, 0)) <= w && w < PyFloat_AS_DOUBLE(PyTuple_GET_ITEM(h, 1))))
            goto done;
        host = PyTuple_GET_ITEM(h, 2);
        if (!PyDate_CheckExact(host)) goto done;
    }

    PyObject *date, *given_now = a[A_GIVEN];
    if (given != Py_None) { /* a valid date, remembered as such, and no date change */
        if ((a[A_GIVEN] != Py_None && !PyDate_CheckExact(a[A_GIVEN]))
            || (a[A_BAD] != Py_None && !PyDate_CheckExact(a[A_BAD])))
            goto done; /* the memo key hashes dates and None only: no Python code runs here */
        key = PyTuple_Pack(4, given, host, a[A_GIVEN], a[A_BAD]);
        if (key == NULL || !PyDict_CheckExact(a[A_PROBLEMS])) goto error_or_done;
        PyObject *why = PyDict_GetItemWithError(a[A_PROBLEMS], key);
        if (why != Py_None) goto error_or_done; /* not remembered (or an error), or not valid */
        if (a[A_GIVEN] != Py_None && !date_bad && !same_day(given, a[A_GIVEN])) goto done; /* a date change */
        date = given_now = given;
        date_bad = 0;
    } else { /* the date carried on, no midnight between */
        date = a[A_DATE];
        if (date == Py_None || a[A_LAST_TOD] == Py_None || date_bad || !PyFloat_CheckExact(a[A_LAST_TOD]))
            goto done;
        double last = PyFloat_AS_DOUBLE(a[A_LAST_TOD]);
        if (t < last - HALF_DAY_S || t > last + HALF_DAY_S) goto done;
    }
    if (!PyDate_CheckExact(date)) goto done;
    int date_known = given_now != Py_None || host != Py_None;

    /* utc = self._start_of(self.date) + tod: the remembered day start */
    PyObject *mid = a[A_MIDNIGHT];
    if (!PyTuple_CheckExact(mid) || PyTuple_GET_SIZE(mid) != 2 || !PyDate_CheckExact(PyTuple_GET_ITEM(mid, 0))
        || !PyFloat_CheckExact(PyTuple_GET_ITEM(mid, 1)) || !same_day(date, PyTuple_GET_ITEM(mid, 0)))
        goto done;
    double utc = PyFloat_AS_DOUBLE(PyTuple_GET_ITEM(mid, 1)) + t;

    /* self._gate(utc, mono, notes): an ordinary step forward (or none), no jump held */
    if (a[A_JUMP] != Py_None || !PyFloat_CheckExact(a[A_LAST_UTC])) goto done;
    if (a[A_LAST_MONO] != Py_None && !PyFloat_CheckExact(a[A_LAST_MONO])) goto done;
    double nominal;
    int had_nominal = a[A_NOMINAL] != Py_None;
    if (had_nominal) {
        if (!PyFloat_CheckExact(a[A_NOMINAL])) goto done;
        nominal = PyFloat_AS_DOUBLE(a[A_NOMINAL]);
    } else if (!median_step(r, a[A_STEPS], &nominal))
        goto done;
    double ten = JUMP_FACTOR * nominal;
    double limit = ten > JUMP_MIN_S ? ten : JUMP_MIN_S; /* max(JUMP_MIN_S, ten): the first unless ten is larger */
    double dt = utc - PyFloat_AS_DOUBLE(a[A_LAST_UTC]);
    if (!(-limit <= dt && dt <= limit) || dt < 0) goto done; /* a jump, a hole or a step back: notes or holds */
    int step = 0 < dt; /* dt <= limit already */

    /* the common path it is: build everything, then write it */
    PyObject *o_utc = PyFloat_FromDouble(utc), *o_nom = NULL, *notes = PyList_New(0), *res = NULL;
    if (o_utc == NULL || notes == NULL) goto fail;
    if (step) {
        PyObject *o_dt = PyFloat_FromDouble(dt);
        PyObject *rv = o_dt == NULL ? NULL : PyObject_CallMethodOneArg(a[A_STEPS], S_append, o_dt);
        Py_XDECREF(o_dt);
        if (rv == NULL) goto fail;
        Py_DECREF(rv);
    } else if (!had_nominal && (o_nom = PyFloat_FromDouble(nominal)) == NULL)
        goto fail;
    res = PyTuple_Pack(2, o_utc, notes);
    if (res == NULL) goto fail;
    /* held: replacing an attribute may free its old value, and the dict's borrowed ones with it */
    PyObject *nominal_now = Py_NewRef(step ? Py_None : (o_nom != NULL ? o_nom : a[A_NOMINAL]));
    /* the writes of the reference, in its order; the values are all held elsewhere meanwhile */
    if ((given != Py_None
         && (PyDict_SetItem(dict, S_attr[A_DATE_BAD], Py_False) < 0 || PyDict_SetItem(dict, S_attr[A_GIVEN], given) < 0
             || PyDict_SetItem(dict, S_attr[A_DATE], given) < 0))
        || PyDict_SetItem(dict, S_attr[A_LAST_TOD], tod) < 0
        || PyDict_SetItem(dict, S_attr[A_DATE_KNOWN], date_known ? Py_True : Py_False) < 0
        || PyDict_SetItem(dict, S_attr[A_NOMINAL], nominal_now) < 0
        || PyDict_SetItem(dict, S_attr[A_JUMP], Py_None) < 0 || PyDict_SetItem(dict, S_attr[A_LAST_UTC], o_utc) < 0
        || PyDict_SetItem(dict, S_attr[A_LAST_MONO], mono) < 0) {
        Py_DECREF(nominal_now);
        Py_CLEAR(res);
        goto fail;
    }
    Py_DECREF(nominal_now);
    *result = res;
    ret = 1;
fail:
    Py_XDECREF(o_utc);
    Py_XDECREF(o_nom);
    Py_XDECREF(notes);
    if (ret == 0) ret = -1;
    goto done;
error_or_done:
    if (PyErr_Occurred()) PyErr_Clear(); /* an odd key: the reference meets the same and decides */
done:
    Py_XDECREF(key);
    Py_DECREF(dict);
    return ret;
}

static PyObject *resolver_call(Resolver *r, PyObject *const *args, size_t nargsf, PyObject *kwnames)
{
    Py_ssize_t n = PyVectorcall_NARGS(nargsf);
    PyObject *res = NULL;
    if (kwnames == NULL && (n == 4 || n == 5)) {
        int k = fast(r, args, n, &res);
        if (k != 0) return k > 0 ? res : NULL;
    }
    return PyObject_Vectorcall(r->ref, args, nargsf, kwnames);
}

static PyObject *resolver_get(PyObject *self, PyObject *obj, PyObject *type)
{
    (void)type;
    if (obj == NULL || obj == Py_None) return Py_NewRef(self);
    return PyMethod_New(self, obj); /* a bound method, as for a function */
}

static int resolver_traverse(Resolver *r, visitproc visit, void *arg)
{
    Py_VISIT(r->ref);
    Py_VISIT(r->cls);
    Py_VISIT(r->deque);
    return 0;
}

static int resolver_clear(Resolver *r)
{
    Py_CLEAR(r->ref);
    Py_CLEAR(r->cls);
    Py_CLEAR(r->deque);
    return 0;
}

static void resolver_dealloc(Resolver *r)
{
    PyObject_GC_UnTrack(r);
    resolver_clear(r);
    Py_TYPE(r)->tp_free((PyObject *)r);
}

static PyObject *resolver_new(PyTypeObject *type, PyObject *args, PyObject *kw)
{
    PyObject *ref, *cls, *deque;
    static char *kwlist[] = {"ref", "cls", "deque", NULL};
    if (!PyArg_ParseTupleAndKeywords(args, kw, "OO!O!:Resolver", kwlist, &ref, &PyType_Type, &cls, &PyType_Type,
                                     &deque))
        return NULL;
    if (!PyCallable_Check(ref)) {
        PyErr_SetString(PyExc_TypeError, "Resolver: ref must be callable");
        return NULL;
    }
    Resolver *r = (Resolver *)type->tp_alloc(type, 0);
    if (r == NULL) return NULL;
    r->vectorcall = (vectorcallfunc)resolver_call;
    r->ref = Py_NewRef(ref);
    r->cls = (PyTypeObject *)Py_NewRef(cls);
    r->deque = (PyTypeObject *)Py_NewRef(deque);
    return (PyObject *)r;
}

PyDoc_STRVAR(resolver_doc, "Resolver(ref, cls, deque): UtcClock.resolve for instances of exactly cls, the common\n"
                           "path in C and everything else by ref (the reference function); deque is\n"
                           "collections.deque. Used by livefix.state.clock, which checks the constants.");

static PyTypeObject ResolverType = {
    PyVarObject_HEAD_INIT(NULL, 0)
    .tp_name = "livefix.state._clockcore.Resolver",
    .tp_basicsize = sizeof(Resolver),
    .tp_flags = Py_TPFLAGS_DEFAULT | Py_TPFLAGS_HAVE_GC | Py_TPFLAGS_HAVE_VECTORCALL | Py_TPFLAGS_METHOD_DESCRIPTOR,
    .tp_doc = resolver_doc,
    .tp_new = resolver_new,
    .tp_dealloc = (destructor)resolver_dealloc,
    .tp_traverse = (traverseproc)resolver_traverse,
    .tp_clear = (inquiry)resolver_clear,
    .tp_vectorcall_offset = offsetof(Resolver, vectorcall),
    .tp_call = PyVectorcall_Call,
    .tp_descr_get = resolver_get,
};

static struct PyModuleDef MODULE = {PyModuleDef_HEAD_INIT, "livefix.state._clockcore",
                                    "The common path of UtcClock.resolve in C (see livefix/state/clock.py).", -1,
                                    NULL, NULL, NULL, NULL, NULL};

static int add_float(PyObject *mod, const char *name, double v)
{
    PyObject *x = PyFloat_FromDouble(v);
    int r = x == NULL ? -1 : PyModule_AddObjectRef(mod, name, x);
    Py_XDECREF(x);
    return r;
}

PyMODINIT_FUNC PyInit__clockcore(void)
{
    PyDateTime_IMPORT;
    if (PyDateTimeAPI == NULL) return NULL;
    for (int i = 0; i < NATTR; i++)
        if (S_attr[i] == NULL && (S_attr[i] = PyUnicode_InternFromString(ATTR[i])) == NULL) return NULL;
    if (S_append == NULL && (S_append = PyUnicode_InternFromString("append")) == NULL) return NULL;
    if (PyType_Ready(&ResolverType) < 0) return NULL;
    PyObject *mod = PyModule_Create(&MODULE);
    if (mod == NULL) return NULL;
    if (PyModule_AddObjectRef(mod, "Resolver", (PyObject *)&ResolverType) < 0
        || add_float(mod, "UNDATED_BEFORE", UNDATED_BEFORE) < 0 || add_float(mod, "HALF_DAY_S", HALF_DAY_S) < 0
        || add_float(mod, "JUMP_FACTOR", JUMP_FACTOR) < 0 || add_float(mod, "JUMP_MIN_S", JUMP_MIN_S) < 0) {
        Py_DECREF(mod);
        return NULL;
    }
    return mod;
}
