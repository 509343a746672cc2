/* livefix.analysis._sigcore: the declarations its source files share (private to the module).
 *
 * The module is built from _sigcore.c (the module and configure(): the satellite type, tables and
 * constants), _sigcore_loops.c (accumulate() and baselines()), _sigcore_step.c (step(): on_epoch and
 * _accumulate) and _sigcore_interf.c (_interference). The value checks both loops run
 * per satellite are static inline here; everything else shared has the sig_ prefix and hidden
 * visibility, so the extension exports nothing but its init function.
 */
#ifndef LIVEFIX_SIGCORE_H
#define LIVEFIX_SIGCORE_H

#define PY_SSIZE_T_CLEAN
#include <Python.h>
#include <math.h>
#include <string.h>

#include "../_corekit.h"

#if defined(__GNUC__) && !defined(_WIN32)
#define SIG_HIDDEN __attribute__((visibility("hidden")))
#else
#define SIG_HIDDEN
#endif

enum { F_SYSTEM, F_PRN, F_SIGNAL, F_ELEV, F_AZIM, F_CN0, F_COUNT };

/* set once by configure() (_sigcore.c) */
SIG_HIDDEN extern int sig_configured;
SIG_HIDDEN extern PyTypeObject *sig_sat_type;          /* livefix.state.epoch.SatObs (held) */
SIG_HIDDEN extern Py_ssize_t sig_field_off[F_COUNT];   /* slot offsets of its fields */
SIG_HIDDEN extern double sig_sin_tab[91];
SIG_HIDDEN extern Py_ssize_t sig_band_tab[91], sig_cell_el_tab[91];
SIG_HIDDEN extern long long sig_sector_az, sig_base_min_n;
SIG_HIDDEN extern double sig_base_tau_s, sig_lost_s, sig_lost_cn0;

SIG_HIDDEN int sig_need_config(void);  /* 0 with RuntimeError when configure() was not called */

/* The weight of a new C/N0 in a satellite's baseline (SignalStats._baseline_sats): 1/(n+1) while the
 * baseline has fewer than base_min_n samples, then the time since its last update over base_tau_s,
 * at most 1 (an exponential forgetting by time). td: now; b2: the baseline's last update; bn: samples. */
static inline double sig_base_weight(long long bn, double td, double b2)
{
    if (bn < sig_base_min_n)
        return 1.0 / (double)(bn + 1);
    double a = td - b2;
    a = (a > 0.0 ? a : 0.0) / sig_base_tau_s;
    return a > 1.0 ? 1.0 : a;
}

/* the epoch fields step() reads, and the constants of SignalStats.on_epoch / _interference (configure()) */
enum { E_MONO, E_SATS, E_COUNT };
SIG_HIDDEN extern PyTypeObject *sig_epoch_type;        /* livefix.state.epoch.Epoch (held) */
SIG_HIDDEN extern Py_ssize_t sig_epoch_off[E_COUNT];
SIG_HIDDEN extern double sig_eval_s, sig_share, sig_forget_s;
SIG_HIDDEN extern long long sig_min_measured;

/* the attribute names step() uses (interned by the module's init) */
enum {
    N_LAST_SATS, N_CUR, N_CUR_SUM, N_CUR_MEAN, N_CUR_TOP4, N_IF_T, N_N, N_SUM, N_TOP4_SUM, N_TOP4_N, N_CS, N_BY_SYS,
    N_BANDS, N_CELLS, N_CONFIG, N_MASK, N_THR, N_BASE, N_ACTIVE, N_ACCUMULATE, N_ACCUMULATE_SATS, N_INTERFERENCE,
    N_COUNT
};
SIG_HIDDEN extern PyObject *sig_name[N_COUNT];

/* _sigcore_loops.c */
SIG_HIDDEN PyObject *sig_accumulate(PyObject *mod, PyObject *args);
SIG_HIDDEN PyObject *sig_baselines(PyObject *mod, PyObject *args);
/* the accumulate loop on checked containers (sats a list): satellites done, or -1 with an error set */
SIG_HIDDEN Py_ssize_t sig_accumulate_run(PyObject *sats, PyObject *cs, PyObject *by_sys, PyObject *bands,
                                         PyObject *cells, double mask);

/* _sigcore_step.c: SignalStats.on_epoch (the vectorcall function step) */
SIG_HIDDEN PyObject *sig_step(PyObject *mod, PyObject *const *args, Py_ssize_t nargs);

/* _sigcore_interf.c: SignalStats._interference when no episode is open and none starts:
 * 1 done, 0 not taken here (nothing changed: the caller runs the Python method), -1 error */
SIG_HIDDEN int sig_interference(PyObject *self, PyObject *ep);

/* ---- values ---- */

/* An exact int that fits a long long with room for + 1: 1 and its value, else 0. */
static inline int count_of(PyObject *v, long long *out)
{
    return kit_count_in(v, LLONG_MIN, LLONG_MAX - 1, out);
}

/* A list of at least n items, the first n of exact types: 'f' float, 'i' int (a count). */
static inline int entry_ok(PyObject *e, const char *kinds)
{
    Py_ssize_t n = (Py_ssize_t)strlen(kinds);
    if (!PyList_CheckExact(e) || PyList_GET_SIZE(e) < n)
        return 0;
    for (Py_ssize_t k = 0; k < n; k++) {
        PyObject *x = PyList_GET_ITEM(e, k);
        long long dummy;
        if (kinds[k] == 'f' ? !PyFloat_CheckExact(x) : !count_of(x, &dummy))
            return 0;
    }
    return 1;
}

/* An attribute (new reference), or NULL with no error set: the Python code then meets it itself. */
static inline PyObject *attr(PyObject *o, int name)
{
    PyObject *v = PyObject_GetAttr(o, sig_name[name]);
    if (v == NULL)
        PyErr_Clear();
    return v;
}

static inline PyObject *slot(PyObject *s, int f)
{
    return *(PyObject **)((char *)s + sig_field_off[f]);
}

static inline PyObject *eslot(PyObject *ep, int f)
{
    return *(PyObject **)((char *)ep + sig_epoch_off[f]);
}

/* The fields of a SatObs (borrowed), or 0 when s is something else or a slot is unset. */
static inline int fields_of(PyObject *s, PyObject **v)
{
    if (Py_TYPE(s) != sig_sat_type)
        return 0;
    for (int f = 0; f < F_COUNT; f++)
        if ((v[f] = slot(s, f)) == NULL)
            return 0;
    return 1;
}

/* Python's float `x % 360` (floor modulo: the sign of the divisor), then int(); x finite. */
static inline long long az_cell(double x)
{
    double m = fmod(x, 360.0);
    if (m != 0.0) {
        if (m < 0.0)
            m += 360.0;
    }
    else
        m = 0.0; /* copysign(0, 360) */
    return (long long)m / sig_sector_az;
}

#endif
