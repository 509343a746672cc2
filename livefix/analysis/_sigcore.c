/* livefix.analysis._sigcore: the two once-per-second satellite loops of livefix/analysis/signal.py
 * (SignalStats._accumulate_sats and SignalStats._baseline_sats) in C.
 *
 * Why: with ~40 signals in view these loops cost tens of microseconds per run in Python, the largest
 * single item of the per-epoch analysis. The Python loops stay the reference: each function here
 * takes the same containers and updates them in place with the same float operations in the same
 * order (built with -ffp-contract=off, no fast math), creating entries in the same order.
 *
 * Hand-over instead of error mirroring: for each satellite every value and container entry is
 * checked before anything is changed. Exact int (|v| <= 2**53), exact float, None and exact str
 * are handled; any other type, any value whose Python operation would raise (an elevation float in
 * 0..90 used as a list index, a non-finite azimuth given to int()), or an entry of an unexpected
 * shape stops the loop there. The function returns the number of satellites done, and the Python
 * loop goes on from that one, so odd inputs take exactly the reference's path, exceptions and
 * partial states included. tests/analysis/test_signal_native.py compares the two step by step.
 *
 * Tables and constants (sin of whole degrees, band and sector-row tables, time constants) are
 * handed over once by configure(), so they can never drift from the Python module.
 *
 * step() is SignalStats.on_epoch in C (_sigcore_step.c, _sigcore_interf.c): the same attribute reads
 * and stores, calling the Python methods (_accumulate, _accumulate_sats, _interference) for the parts
 * it does not take, and handing the whole epoch back (False, nothing changed) on odd epochs;
 * bind_step() binds it to a stage as the Analyzer's on_epoch.
 *
 * The module's files: this one (the module and configure()), _sigcore_loops.c (the two loops),
 * _sigcore_step.c and _sigcore_interf.c (step()) and their private header _sigcore.h.
 */
#include "_sigcore.h"

#define API 2

static const char *FIELD_NAMES[F_COUNT] = {"system", "prn", "signal", "elev", "azim", "cn0"};
static const char *EPOCH_FIELDS[E_COUNT] = {"mono", "sats"};
static const char *NAMES[N_COUNT] = {
    "_last_sats", "cur", "_cur_sum", "cur_mean", "cur_top4", "_if_t", "n", "sum", "top4_sum", "top4_n", "cs", "by_sys",
    "bands", "cells", "config", "elev_mask_deg", "interference_drop_db", "base", "active", "_accumulate",
    "_accumulate_sats", "_interference",
};

int sig_configured;
PyTypeObject *sig_sat_type;
Py_ssize_t sig_field_off[F_COUNT];
double sig_sin_tab[91];
Py_ssize_t sig_band_tab[91], sig_cell_el_tab[91];
long long sig_sector_az, sig_base_min_n;
double sig_base_tau_s, sig_lost_s, sig_lost_cn0;
PyTypeObject *sig_epoch_type;
Py_ssize_t sig_epoch_off[E_COUNT];
double sig_eval_s, sig_share, sig_forget_s;
long long sig_min_measured;
PyObject *sig_name[N_COUNT];

/* ---- configure ---- */

static int table(PyObject *seq, double *d, Py_ssize_t *z)
{
    if (!PyList_Check(seq) || PyList_GET_SIZE(seq) != 91) {
        PyErr_SetString(PyExc_ValueError, "tables must be lists of 91 numbers");
        return -1;
    }
    for (Py_ssize_t e = 0; e < 91; e++) {
        PyObject *x = PyList_GET_ITEM(seq, e);
        if (d != NULL) {
            if (!PyFloat_CheckExact(x)) {
                PyErr_SetString(PyExc_TypeError, "the sine table must hold floats");
                return -1;
            }
            d[e] = PyFloat_AS_DOUBLE(x);
        }
        else {
            if (!PyLong_CheckExact(x)) {
                PyErr_SetString(PyExc_TypeError, "index tables must hold ints");
                return -1;
            }
            z[e] = PyLong_AsSsize_t(x);
            if (z[e] == -1 && PyErr_Occurred())
                return -1;
        }
    }
    return 0;
}

static PyObject *configure(PyObject *mod, PyObject *args)
{
    (void)mod;
    PyObject *type, *sin_l, *band_l, *cell_l, *etype;
    long long az, min_n, min_meas;
    double tau, lost, lost_c, eval_s, share, forget;
    if (!PyArg_ParseTuple(args, "O!O!O!O!LLdddO!ddLd", &PyType_Type, &type, &PyList_Type, &sin_l, &PyList_Type,
                          &band_l, &PyList_Type, &cell_l, &az, &min_n, &tau, &lost, &lost_c, &PyType_Type, &etype,
                          &eval_s, &share, &min_meas, &forget))
        return NULL;
    if (az <= 0) {
        PyErr_SetString(PyExc_ValueError, "sector width must be positive");
        return NULL;
    }
    Py_ssize_t off[F_COUNT], eoff[E_COUNT];
    if (kit_slot_offsets(type, FIELD_NAMES, F_COUNT, off, "%s is not a slot of the satellite type") < 0
        || kit_slot_offsets(etype, EPOCH_FIELDS, E_COUNT, eoff, "%s is not a slot of the epoch type") < 0)
        return NULL;
    double s[91];
    Py_ssize_t b[91], c[91];
    if (table(sin_l, s, NULL) < 0 || table(band_l, NULL, b) < 0 || table(cell_l, NULL, c) < 0)
        return NULL;
    memcpy(sig_sin_tab, s, sizeof s);
    memcpy(sig_band_tab, b, sizeof b);
    memcpy(sig_cell_el_tab, c, sizeof c);
    memcpy(sig_field_off, off, sizeof off);
    memcpy(sig_epoch_off, eoff, sizeof eoff);
    Py_INCREF(type);
    Py_XSETREF(sig_sat_type, (PyTypeObject *)type);
    Py_INCREF(etype);
    Py_XSETREF(sig_epoch_type, (PyTypeObject *)etype);
    sig_eval_s = eval_s;
    sig_share = share;
    sig_min_measured = min_meas;
    sig_forget_s = forget;
    sig_sector_az = az;
    sig_base_min_n = min_n;
    sig_base_tau_s = tau;
    sig_lost_s = lost;
    sig_lost_cn0 = lost_c;
    sig_configured = 1;
    Py_RETURN_NONE;
}

int sig_need_config(void)
{
    if (!sig_configured)
        PyErr_SetString(PyExc_RuntimeError, "livefix.analysis._sigcore: configure() was not called");
    return sig_configured;
}

/* bind_step(): step() bound to one SignalStats as the Analyzer's on_epoch, so the common epoch costs no
 * Python frame; when step() hands back it runs the reference (SignalStats.epoch_reference) on the
 * stage. Its __qualname__ is "SignalStats.on_epoch", as the Analyzer's error notes name the stage. */
static PyObject *bound_ref; /* the reference function, set once by bind_step */

static PyObject *bound_step(PyObject *stage, PyObject *ep)
{
    PyObject *a[2] = {stage, ep}, *r = sig_step(NULL, a, 2);
    if (r == NULL)
        return NULL;
    int done = r == Py_True;
    Py_DECREF(r);
    if (done)
        Py_RETURN_NONE;
    return PyObject_Vectorcall(bound_ref, a, 2, NULL);
}

static PyMethodDef BOUND = {"on_epoch", bound_step, METH_O,
                            "on_epoch(ep): step(), or the reference when it hands back (livefix.analysis._sigcore)"};

static PyObject *bind_step(PyObject *Py_UNUSED(mod), PyObject *args)
{
    PyObject *stage, *ref;
    if (!PyArg_ParseTuple(args, "OO:bind_step", &stage, &ref))
        return NULL;
    if (!PyCallable_Check(ref)) {
        PyErr_SetString(PyExc_TypeError, "bind_step: the reference must be callable");
        return NULL;
    }
    if (bound_ref != NULL && bound_ref != ref) {
        PyErr_SetString(PyExc_ValueError, "bind_step: another reference than before");
        return NULL;
    }
    Py_XSETREF(bound_ref, Py_NewRef(ref));
    return PyCFunction_NewEx(&BOUND, stage, NULL);
}

PyDoc_STRVAR(accumulate_doc,
"accumulate(sats, cs, by_sys, bands, cells, mask) -> int\n\n"
"SignalStats._accumulate_sats over sats (a list) in place; returns how many satellites were done\n"
"(the Python loop goes on from there). cs is written back as the Python finally does.");

PyDoc_STRVAR(baselines_doc,
"baselines(sats, base, t, thr, frozen, seen, drops, measured) -> int\n\n"
"SignalStats._baseline_sats over sats (a tuple or list) in place; returns how many satellites\n"
"were done (the Python loop goes on from there).");

PyDoc_STRVAR(step_doc,
"step(stats, ep) -> bool\n\n"
"SignalStats.on_epoch(ep) on stats; False (nothing changed) when the Python code must run the epoch.\n"
"The parts it leaves (odd containers, open or starting episodes) run as the Python methods.");

static PyMethodDef methods[] = {
    {"configure", configure, METH_VARARGS,
     "configure(sat_type, sin, band, cell_el, sector_az, base_min_n, base_tau_s, lost_s, lost_cn0, epoch_type,\n"
     "          eval_s, share, min_measured, forget_s)\n\n"
     "The satellite and epoch types, tables and constants of livefix.analysis.signal (called once on import)."},
    {"accumulate", sig_accumulate, METH_VARARGS, accumulate_doc},
    {"baselines", sig_baselines, METH_VARARGS, baselines_doc},
    {"step", (PyCFunction)(void (*)(void))sig_step, METH_FASTCALL, step_doc},
    {"bind_step", bind_step, METH_VARARGS,
     "bind_step(stats, reference) -> callable\n\non_epoch(ep) for stats: step(), and reference(stats, ep) when it\n"
     "hands back."},
    {NULL, NULL, 0, NULL},
};

static struct PyModuleDef moduledef = {
    PyModuleDef_HEAD_INIT, "livefix.analysis._sigcore",
    "C twin of the satellite loops of livefix.analysis.signal.SignalStats (the Python code is the reference).",
    -1, methods, NULL, NULL, NULL, NULL,
};

PyMODINIT_FUNC PyInit__sigcore(void)
{
    for (int k = 0; k < N_COUNT; k++)
        if (sig_name[k] == NULL && (sig_name[k] = PyUnicode_InternFromString(NAMES[k])) == NULL)
            return NULL;
    PyObject *m = PyModule_Create(&moduledef);
    if (m != NULL && PyModule_AddIntConstant(m, "API", API) < 0)
        Py_CLEAR(m);
    return m;
}
