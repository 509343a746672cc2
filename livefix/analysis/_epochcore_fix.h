/* livefix.analysis._epochcore: what the two files of FixStats.on_epoch's C step share (private):
 * _epochcore_fix.c (configure_fix, fix_step and the writes) and _epochcore_fixplan.c (the checks and
 * the arithmetic of the common path). See _epochcore_fix.c for the notes.
 */
#ifndef LIVEFIX_EPOCHCORE_FIX_H
#define LIVEFIX_EPOCHCORE_FIX_H

#include "_epochcore.h"

enum { EP_MONO, EP_WALL, EP_UTC, EP_QUALITY, EP_LAT, EP_LON, EP_H, EP_SENTENCES, EP_COUNT };
enum { TL_T, TL_UTC, TL_UTC_T, TL_MONO, TL_RESET, TL_ABS, TL_EP, TL_COUNT };
enum { TB_TIME, TB_PREV_T, TB_PREV, TB_COUNT };
enum { RC_N, RC_ME, RC_MN, RC_VE, RC_VN, RC_COUNT };

/* the FixStats attributes read or written (instance dict keys) */
enum {
    A_CLOCK, A_ANCHOR, A_GAPS_AT, A_LAST_MONO, A_EPOCHS, A_PREV_T, A_DTS, A_DTS_SORTED, A_IV, A_VALID, A_COUNTS,
    A_RESTART_AT, A_START, A_CLOCK_LOST, A_AWAIT_LOSS, A_ACQUIRING, A_BOOK, A_LAST_T, A_LOST_AT, A_LAST_FIX,
    A_GAP_SPLIT, A_FIX_MARKED, A_RTK_MARKED, A_PROJ, A_RECENT, A_CURRENT, A_CFG, A_COUNT
};

enum { X_Q0, X_WAIT, X_APPEND, X_ENU, X_COUNT };

enum { CF_JUMP_M, CF_JUMP_SIGMA, CF_COUNT };

#define WINDOW_MAX 256 /* DT_N at most: the sorted window is rebuilt on the stack */

/* module state, set by configure_fix */
EP_HIDDEN extern PyTypeObject *ep_fx_stats, *ep_fx_epoch, *ep_fx_timeline, *ep_fx_book, *ep_fx_recent, *ep_fx_deque, *ep_fx_cfg;
EP_HIDDEN extern Py_ssize_t ep_fx_ep[EP_COUNT], ep_fx_tl[TL_COUNT], ep_fx_tb[TB_COUNT], ep_fx_rc[RC_COUNT], ep_fx_cf[CF_COUNT];
EP_HIDDEN extern PyObject *ep_fx_names, *ep_fx_none, *ep_fx_position, *ep_fx_not_fix, *ep_fx_hypot; /* FIX_NAMES, "none", sets, math.hypot */
EP_HIDDEN extern double ep_fx_back_s, ep_fx_gap_factor, ep_fx_ew_a;  /* jump_limit(1.0), GAP_FACTOR, _EW_A */
EP_HIDDEN extern long long ep_fx_dt_n, ep_fx_ew_min;               /* DT_N, EW_MIN */
EP_HIDDEN extern PyObject *ep_fx_a[A_COUNT], *ep_fx_x[X_COUNT];    /* interned names */

static inline int is_float(PyObject *v, double *out)
{
    if (v == NULL || !PyFloat_CheckExact(v))
        return 0;
    *out = PyFloat_AS_DOUBLE(v);
    return 1;
}

static inline int float_or_none(PyObject *v, double *out, int *has)
{
    *has = v != Py_None;
    return !*has || is_float(v, out);
}

static inline int str_eq(PyObject *a, PyObject *b) /* exact str a and b */
{
    return a == b || PyUnicode_Compare(a, b) == 0;
}

/* What one common-path on_epoch reads and computes; borrowed references (no Python code runs
 * between the checks and the writes, so they stay valid). */
typedef struct {
    PyObject *a[A_COUNT];             /* the instance attributes */
    PyObject *mono, *wall, *utc;      /* the epoch's */
    PyObject *name, *prev, *time, *rec, *e_obj, *n_obj;
    double t, abs_t, dt2, iv, credit, e, n;
    double rme, rmn, rve, rvn;        /* _Recent.add's new values */
    long long epochs, count, rn;
    Py_ssize_t del, ins, iv_at;       /* window: index left out (-1 none), dt2's place, odd median (-1 even) */
    int has_u, win, shortcut, credits, fixed, fix_bucket;
} FixPlan;

/* The checks and the arithmetic of the common path: 1 (p filled), 0 hand back, -1 error. */
EP_HIDDEN int ep_fix_plan(PyObject *d, PyObject *ep, PyObject *valid, PyObject *enu, FixPlan *p);

#endif
