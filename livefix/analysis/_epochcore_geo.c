/* livefix.analysis._epochcore: the E/N/U projection memo of livefix/analysis/geo.py as two types,
 * EcefMemo and Projector; the module itself is in _epochcore.c.
 *
 * Why: every epoch is projected into two or three local frames; in Python most of that time is the
 * interpreter, not the arithmetic. The memo rules are those of geo.py: a memo holds the latest key
 * (the identity of the three objects, not their values) and its result, so a hit returns the very
 * same tuple; EcefMemo.projector hands out the projector made last from the very same floats.
 *
 * Bit for bit: exact floats (and ints up to 2**53, which convert exactly) with finite latitude and
 * longitude are converted here with livefix.geodesy.geodetic_to_ecef's operations in its order
 * (math.radians is x * (pi / 180) as CPython computes it; sin, cos and sqrt are the C library's;
 * no fused multiply-add: built with -ffp-contract=off). Anything else (None, str, bool, NaN, inf,
 * float subclasses...) goes through the Python function itself, so its results and exceptions are
 * the reference's; a result of other than exact floats is projected with Python's number protocol,
 * as the Python code would. tests/analysis/test_geo_native.py compares the two.
 */
#include "_epochcore.h"

/* module state, set by configure_geo */
static PyObject *geo_to_ecef;  /* livefix.geodesy.geodetic_to_ecef */
static PyObject *geo_frame_at; /* livefix.analysis.geo._frame_at: (lat, lon, h) -> (frame, constants) */
static double geo_a, geo_e2;   /* livefix.geodesy.A, E2 */

static const double DEG_TO_RAD = Py_MATH_PI / 180.0; /* as CPython's mathmodule.c has it */

enum { K_LEN = 11 }; /* ox, oy, oz, r00, r01, r10, r11, r12, r20, r21, r22 (r02 is 0: east has no up) */

typedef struct {
    PyObject *o[4]; /* lat, lon, h (the key, by identity) and the value; NULL: matches nothing */
} Key;

typedef struct {
    PyObject_HEAD
    Key m; /* the latest conversion */
    Key p; /* the latest projector made (val: a Projector) */
} Memo;

typedef struct {
    PyObject_HEAD
    PyObject *frame; /* the LocalFrame, kept for the inverse */
    PyObject *ecef;  /* a Memo */
    PyObject *k;     /* the K_LEN constants as a tuple of floats (for odd values) */
    double c[K_LEN];
    Key m; /* the latest projection */
} Proj;

static PyTypeObject MemoType, ProjType;

static inline int hit(const Key *k, PyObject *lat, PyObject *lon, PyObject *h)
{
    return k->o[0] == lat && k->o[1] == lon && k->o[2] == h && k->o[3] != NULL;
}

/* k = (lat, lon, h, val), val a new reference (stolen); the old entries are dropped last, as the
 * Python code drops its old tuple after binding the new one. */
static void remember(Key *k, PyObject *lat, PyObject *lon, PyObject *h, PyObject *val)
{
    Key old = *k;
    *k = (Key){{Py_NewRef(lat), Py_NewRef(lon), Py_NewRef(h), val}};
    for (int i = 0; i < 4; i++)
        Py_XDECREF(old.o[i]);
}

static int key_traverse(Key *k, visitproc visit, void *arg)
{
    for (int i = 0; i < 4; i++)
        Py_VISIT(k->o[i]);
    return 0;
}

static void key_clear(Key *k)
{
    for (int i = 0; i < 4; i++)
        Py_CLEAR(k->o[i]);
}

static PyObject *triple(double a, double b, double c)
{
    PyObject *t = PyTuple_New(3), *v;
    if (t == NULL)
        return NULL;
    double x[3] = {a, b, c};
    for (Py_ssize_t i = 0; i < 3; i++) {
        if ((v = PyFloat_FromDouble(x[i])) == NULL) {
            Py_DECREF(t);
            return NULL;
        }
        PyTuple_SET_ITEM(t, i, v);
    }
    return t;
}

/* x, unknown to the optimiser: a sin and a cos of one angle would otherwise become one sincos()
 * call, which the C library does not promise to round as its sin() and cos() (math.sin, math.cos) */
static inline double opaque(double x)
{
    volatile double v = x;
    return v;
}

/* geodetic_to_ecef(lat, lon, h) as a new tuple: here for plain values, else by the Python function */
static PyObject *to_ecef(PyObject *lat, PyObject *lon, PyObject *h)
{
    double la, lo, hh;
    if (!num_of(lat, &la) || !num_of(lon, &lo) || !num_of(h, &hh) || !isfinite(la) || !isfinite(lo))
        return PyObject_CallFunctionObjArgs(geo_to_ecef, lat, lon, h, NULL);
    double rlat = la * DEG_TO_RAD, rlon = lo * DEG_TO_RAD;
    double s = sin(rlat), c = cos(opaque(rlat));
    double n = geo_a / sqrt(1.0 - geo_e2 * s * s);
    return triple((n + hh) * c * cos(rlon), (n + hh) * c * sin(opaque(rlon)), (n * (1.0 - geo_e2) + hh) * s);
}

static int is_xyz(PyObject *t)
{
    if (!PyTuple_CheckExact(t) || PyTuple_GET_SIZE(t) != 3) {
        PyErr_SetString(PyExc_TypeError, "geodetic_to_ecef must give a tuple of three values");
        return 0;
    }
    return 1;
}

/* ---- EcefMemo ---- */

static PyObject *memo_new(PyTypeObject *type, PyObject *args, PyObject *kw)
{
    if (!_PyArg_NoKeywords("EcefMemo", kw) || !PyArg_ParseTuple(args, ":EcefMemo"))
        return NULL;
    return type->tp_alloc(type, 0); /* zeroed: both keys match nothing */
}

/* the conversion through the memo: a new reference */
static PyObject *memo_get(Memo *self, PyObject *lat, PyObject *lon, PyObject *h)
{
    if (hit(&self->m, lat, lon, h))
        return Py_NewRef(self->m.o[3]);
    PyObject *xyz = to_ecef(lat, lon, h);
    if (xyz == NULL)
        return NULL;
    remember(&self->m, lat, lon, h, Py_NewRef(xyz));
    return xyz;
}

static PyObject *memo_call(PyObject *self, PyObject *args, PyObject *kw)
{
    PyObject *lat, *lon, *h;
    if (!_PyArg_NoKeywords("EcefMemo", kw) || !PyArg_UnpackTuple(args, "EcefMemo", 3, 3, &lat, &lon, &h)
        || !ep_ready(geo_to_ecef != NULL))
        return NULL;
    return memo_get((Memo *)self, lat, lon, h);
}

static PyObject *proj_make(PyObject *frame, PyObject *ecef, PyObject *k);

static PyObject *memo_projector(PyObject *op, PyObject *const *a, Py_ssize_t n)
{
    Memo *self = (Memo *)op;
    if (!_PyArg_CheckPositional("projector", n, 3, 3) || !ep_ready(geo_frame_at != NULL))
        return NULL;
    if (hit(&self->p, a[0], a[1], a[2]))
        return Py_NewRef(self->p.o[3]);
    PyObject *parts = PyObject_CallFunctionObjArgs(geo_frame_at, a[0], a[1], a[2], NULL), *proj = NULL;
    if (parts == NULL)
        return NULL;
    if (!PyTuple_CheckExact(parts) || PyTuple_GET_SIZE(parts) != 2)
        PyErr_SetString(PyExc_TypeError, "_frame_at must give (frame, constants)");
    else
        proj = proj_make(PyTuple_GET_ITEM(parts, 0), op, PyTuple_GET_ITEM(parts, 1));
    Py_DECREF(parts);
    if (proj != NULL)
        remember(&self->p, a[0], a[1], a[2], Py_NewRef(proj));
    return proj;
}

static int memo_traverse(PyObject *op, visitproc visit, void *arg)
{
    Memo *self = (Memo *)op;
    int r = key_traverse(&self->m, visit, arg);
    return r ? r : key_traverse(&self->p, visit, arg);
}

static int memo_clear(PyObject *op)
{
    key_clear(&((Memo *)op)->m);
    key_clear(&((Memo *)op)->p);
    return 0;
}

static void memo_dealloc(PyObject *op)
{
    PyObject_GC_UnTrack(op);
    memo_clear(op);
    Py_TYPE(op)->tp_free(op);
}

static PyMethodDef memo_methods[] = {
    {"projector", (PyCFunction)(void (*)(void))memo_projector, METH_FASTCALL,
     "projector(lat, lon, h) -> Projector\n\nThe projector about LocalFrame(lat, lon, h) made last when it was made\n"
     "from the very same objects, else a new one through this memo."},
    {NULL, NULL, 0, NULL},
};

static PyTypeObject MemoType = {
    PyVarObject_HEAD_INIT(NULL, 0)
    .tp_name = "livefix.analysis._epochcore.EcefMemo",
    .tp_basicsize = sizeof(Memo),
    .tp_flags = Py_TPFLAGS_DEFAULT | Py_TPFLAGS_HAVE_GC,
    .tp_doc = "geodetic_to_ecef(lat, lon, h) computed once for a run of calls with the same objects\n"
              "(livefix.analysis.geo.EcefMemo in C).",
    .tp_new = memo_new,
    .tp_dealloc = memo_dealloc,
    .tp_traverse = memo_traverse,
    .tp_clear = memo_clear,
    .tp_call = memo_call,
    .tp_methods = memo_methods,
};

/* ---- Projector ---- */

/* Projector(frame, ecef, constants): constants the K_LEN exact floats geo._constants(frame) gives */
static PyObject *proj_make(PyObject *frame, PyObject *ecef, PyObject *k)
{
    if (!Py_IS_TYPE(ecef, &MemoType)) {
        PyErr_SetString(PyExc_TypeError, "a Projector needs an EcefMemo of this module");
        return NULL;
    }
    if (!PyTuple_CheckExact(k) || PyTuple_GET_SIZE(k) != K_LEN) {
        PyErr_Format(PyExc_TypeError, "a tuple of %d floats expected", (int)K_LEN);
        return NULL;
    }
    for (Py_ssize_t i = 0; i < K_LEN; i++)
        if (!PyFloat_CheckExact(PyTuple_GET_ITEM(k, i))) {
            PyErr_Format(PyExc_TypeError, "a tuple of %d floats expected", (int)K_LEN);
            return NULL;
        }
    Proj *self = PyObject_GC_New(Proj, &ProjType);
    if (self == NULL)
        return NULL;
    for (Py_ssize_t i = 0; i < K_LEN; i++)
        self->c[i] = PyFloat_AS_DOUBLE(PyTuple_GET_ITEM(k, i));
    self->frame = Py_NewRef(frame);
    self->ecef = Py_NewRef(ecef);
    self->k = Py_NewRef(k);
    self->m = (Key){{NULL, NULL, NULL, NULL}};
    PyObject_GC_Track((PyObject *)self);
    return (PyObject *)self;
}

static PyObject *proj_new(PyTypeObject *Py_UNUSED(type), PyObject *args, PyObject *kw)
{
    PyObject *frame, *ecef, *k;
    if (!_PyArg_NoKeywords("Projector", kw) || !PyArg_ParseTuple(args, "OOO:Projector", &frame, &ecef, &k))
        return NULL;
    return proj_make(frame, ecef, k);
}

/* The projection of Python objects, with the number protocol: the Python code's operations on
 * what is not an exact float (BINARY_OP is PyNumber_*). A new reference. */
static PyObject *project_objects(PyObject *k, PyObject *xyz)
{
    PyObject *d[3] = {NULL, NULL, NULL}, *out[3] = {NULL, NULL, NULL}, *res = NULL;
    static const int rows[3][3] = {{3, 4, -1}, {5, 6, 7}, {8, 9, 10}}; /* the rotation's places in k */
    int i, j;
    for (i = 0; i < 3; i++)
        if ((d[i] = PyNumber_Subtract(PyTuple_GET_ITEM(xyz, i), PyTuple_GET_ITEM(k, i))) == NULL)
            goto done;
    for (i = 0; i < 3; i++) {
        for (j = 0; j < 3 && rows[i][j] >= 0; j++) {
            PyObject *term = PyNumber_Multiply(PyTuple_GET_ITEM(k, rows[i][j]), d[j]), *sum;
            if (term == NULL)
                goto done;
            if (out[i] == NULL) {
                out[i] = term;
                continue;
            }
            sum = PyNumber_Add(out[i], term);
            Py_DECREF(term);
            Py_SETREF(out[i], sum);
            if (sum == NULL)
                goto done;
        }
    }
    res = PyTuple_Pack(3, out[0], out[1], out[2]);
done:
    for (i = 0; i < 3; i++) {
        Py_XDECREF(d[i]);
        Py_XDECREF(out[i]);
    }
    return res;
}

static PyObject *proj_enu(PyObject *op, PyObject *const *a, Py_ssize_t n)
{
    Proj *self = (Proj *)op;
    if (!_PyArg_CheckPositional("enu", n, 3, 3))
        return NULL;
    PyObject *lat = a[0], *lon = a[1], *h = a[2], *xyz, *out;
    if (hit(&self->m, lat, lon, h))
        return Py_NewRef(self->m.o[3]);
    if (!ep_ready(geo_to_ecef != NULL))
        return NULL;
    Memo *ecef = (Memo *)self->ecef;
    int cached = hit(&ecef->m, lat, lon, h);
    if ((xyz = cached ? Py_NewRef(ecef->m.o[3]) : to_ecef(lat, lon, h)) == NULL)
        return NULL;
    if (!is_xyz(xyz)) { /* the Python code fails on unpacking, before it updates the memo */
        Py_DECREF(xyz);
        return NULL;
    }
    if (!cached)
        remember(&ecef->m, lat, lon, h, Py_NewRef(xyz));
    PyObject *px = PyTuple_GET_ITEM(xyz, 0), *py = PyTuple_GET_ITEM(xyz, 1), *pz = PyTuple_GET_ITEM(xyz, 2);
    if (PyFloat_CheckExact(px) && PyFloat_CheckExact(py) && PyFloat_CheckExact(pz)) {
        const double *c = self->c;
        double dx = PyFloat_AS_DOUBLE(px) - c[0], dy = PyFloat_AS_DOUBLE(py) - c[1], dz = PyFloat_AS_DOUBLE(pz) - c[2];
        out = triple(c[3] * dx + c[4] * dy, c[5] * dx + c[6] * dy + c[7] * dz, c[8] * dx + c[9] * dy + c[10] * dz);
    }
    else
        out = project_objects(self->k, xyz);
    Py_DECREF(xyz);
    if (out != NULL)
        remember(&self->m, lat, lon, h, Py_NewRef(out));
    return out;
}

static int proj_traverse(PyObject *op, visitproc visit, void *arg)
{
    Proj *self = (Proj *)op;
    Py_VISIT(self->frame);
    Py_VISIT(self->ecef);
    Py_VISIT(self->k);
    return key_traverse(&self->m, visit, arg);
}

static int proj_clear(PyObject *op)
{
    Proj *self = (Proj *)op;
    Py_CLEAR(self->frame);
    Py_CLEAR(self->ecef);
    Py_CLEAR(self->k);
    key_clear(&self->m);
    return 0;
}

static void proj_dealloc(PyObject *op)
{
    PyObject_GC_UnTrack(op);
    proj_clear(op);
    Py_TYPE(op)->tp_free(op);
}

static PyMethodDef proj_methods[] = {
    {"enu", (PyCFunction)(void (*)(void))proj_enu, METH_FASTCALL,
     "enu(lat, lon, h) -> (e, n, u)\n\nLocalFrame.enu through the ECEF memo; the latest result is kept."},
    {NULL, NULL, 0, NULL},
};

static PyMemberDef proj_members[] = {
    {"frame", T_OBJECT_EX, offsetof(Proj, frame), 0, "the LocalFrame (for the inverse)"},
    {NULL, 0, 0, 0, NULL},
};

static PyTypeObject ProjType = {
    PyVarObject_HEAD_INIT(NULL, 0)
    .tp_name = "livefix.analysis._epochcore.Projector",
    .tp_basicsize = sizeof(Proj),
    .tp_flags = Py_TPFLAGS_DEFAULT | Py_TPFLAGS_HAVE_GC,
    .tp_doc = "Projector(frame, ecef, constants): LocalFrame.enu through an EcefMemo, the latest result kept\n"
              "(livefix.analysis.geo.Projector in C).",
    .tp_new = proj_new,
    .tp_dealloc = proj_dealloc,
    .tp_traverse = proj_traverse,
    .tp_clear = proj_clear,
    .tp_methods = proj_methods,
    .tp_members = proj_members,
};

/* ---- configure and register ---- */

PyObject *ep_configure_geo(PyObject *Py_UNUSED(mod), PyObject *args)
{
    PyObject *to_ecef_fn, *frame_at;
    double a, e2;
    if (!PyArg_ParseTuple(args, "OOdd", &to_ecef_fn, &frame_at, &a, &e2))
        return NULL;
    if (!PyCallable_Check(to_ecef_fn) || !PyCallable_Check(frame_at)) {
        PyErr_SetString(PyExc_TypeError, "configure_geo takes two callables");
        return NULL;
    }
    Py_XSETREF(geo_to_ecef, Py_NewRef(to_ecef_fn));
    Py_XSETREF(geo_frame_at, Py_NewRef(frame_at));
    geo_a = a;
    geo_e2 = e2;
    Py_RETURN_NONE;
}

int ep_geo_add_types(PyObject *m)
{
    if (PyType_Ready(&MemoType) < 0 || PyType_Ready(&ProjType) < 0)
        return -1;
    if (PyModule_AddObjectRef(m, "EcefMemo", (PyObject *)&MemoType) < 0
        || PyModule_AddObjectRef(m, "Projector", (PyObject *)&ProjType) < 0)
        return -1;
    return 0;
}
