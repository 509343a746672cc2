/* livefix.analysis._epochcore: the running-session case of livefix/analysis/fixes.py (FixStats.on_epoch)
 * as fix_step(); the checks and the arithmetic are in _epochcore_fixplan.c, the module itself in
 * _epochcore.c.
 *
 * Why: nearly every epoch of a session is the same story: the timeline moves on (Timeline.step),
 * the interval window takes one step (FixStats._add_dt), the time book credits the previous bucket
 * (TimeBook.step), and a fixed epoch updates its fix type's recent scatter (FixStats._jump, no jump).
 * That case is done here with the same float operations in the same order (built with
 * -ffp-contract=off; math.hypot is called as the Python code calls it, sqrt is correctly rounded in
 * both), writing the same state into the same Python objects (the FixStats instance's dict, the
 * Timeline, TimeBook and _Recent slots, the window deque and its sorted list).
 *
 * Hand-over: everything is read and checked before anything is written. The first epoch, a restart
 * (marker, receiver clock back, date lost), a data gap noted, an epoch without a position sentence, a
 * TTFF still waiting, a fix lost, regained or changed, epochs stopping while fixed, a jump, a new fix
 * type, a height of None or 0.0 (`ep.h or 0.0` makes a new object), an unset projector, and any value
 * or container of another type: fix_step returns False having changed nothing (it may have asked the
 * fix test and the projector, whose answers are memos of the epoch: asked again they give the same),
 * and the Python code runs the whole reference body. The fix test must be a function of the epoch
 * alone (streaming.valid_fix or fix_memo, as the Analyzer wires it). tests/analysis/test_fix_native.py
 * compares the two step by step.
 */
#include "_epochcore_fix.h"

static const char *EP_FIELDS[EP_COUNT] = {"mono", "wall", "utc", "quality", "lat", "lon", "h", "sentences"};
static const char *TL_FIELDS[TL_COUNT] = {"t", "_utc", "_utc_t", "_mono", "reset", "abs_time", "_ep"};
static const char *TB_FIELDS[TB_COUNT] = {"time", "prev_t", "prev"};
static const char *RC_FIELDS[RC_COUNT] = {"n", "me", "mn", "ve", "vn"};
static const char *A_NAMES[A_COUNT] = {
    "clock", "_anchor", "_gaps_at", "_last_mono", "epochs", "_prev_t", "_dts", "_dts_sorted", "_iv", "_valid",
    "counts", "_restart_at", "_start", "_clock_lost", "_await_loss", "_acquiring", "book", "_last_t", "_lost_at",
    "_last_fix", "_gap_split", "_fix_marked", "_rtk_marked", "_proj", "_recent", "current", "cfg"};
static const char *X_NAMES[X_COUNT] = {"_q0", "_wait", "append", "enu"};
static const char *CF_FIELDS[CF_COUNT] = {"jump_m", "jump_sigma"};

/* module state, set by configure_fix */
PyTypeObject *ep_fx_stats, *ep_fx_epoch, *ep_fx_timeline, *ep_fx_book, *ep_fx_recent, *ep_fx_deque, *ep_fx_cfg;
Py_ssize_t ep_fx_ep[EP_COUNT], ep_fx_tl[TL_COUNT], ep_fx_tb[TB_COUNT], ep_fx_rc[RC_COUNT], ep_fx_cf[CF_COUNT];
PyObject *ep_fx_names, *ep_fx_none, *ep_fx_position, *ep_fx_not_fix, *ep_fx_hypot; /* FIX_NAMES, "none", sets, math.hypot */
double ep_fx_back_s, ep_fx_gap_factor, ep_fx_ew_a;  /* jump_limit(1.0), GAP_FACTOR, _EW_A */
long long ep_fx_dt_n, ep_fx_ew_min;               /* DT_N, EW_MIN */
PyObject *ep_fx_a[A_COUNT], *ep_fx_x[X_COUNT];    /* interned names */

PyObject *ep_configure_fix(PyObject *Py_UNUSED(mod), PyObject *args)
{
    PyObject *st, *epo, *tl, *tb, *rc, *dq, *cf, *names, *none, *pos, *notfix, *hyp;
    double back, gapf, ewa;
    long long dtn, ewmin;
    Py_ssize_t o1[EP_COUNT], o2[TL_COUNT], o3[TB_COUNT], o4[RC_COUNT], o5[CF_COUNT];
    const char *fmt = "%s is not a slot of %R";
    if (!PyArg_ParseTuple(args, "O!O!O!O!O!O!O!O!UO!O!OddLLd", &PyType_Type, &st, &PyType_Type, &epo, &PyType_Type,
                          &tl, &PyType_Type, &tb, &PyType_Type, &rc, &PyType_Type, &dq, &PyType_Type, &cf, &PyDict_Type,
                          &names, &none, &PyFrozenSet_Type, &pos, &PyFrozenSet_Type, &notfix, &hyp, &back, &gapf, &dtn,
                          &ewmin, &ewa)
        || kit_slot_offsets(cf, CF_FIELDS, CF_COUNT, o5, fmt) < 0
        || kit_slot_offsets(epo, EP_FIELDS, EP_COUNT, o1, fmt) < 0
        || kit_slot_offsets(tl, TL_FIELDS, TL_COUNT, o2, fmt) < 0
        || kit_slot_offsets(tb, TB_FIELDS, TB_COUNT, o3, fmt) < 0
        || kit_slot_offsets(rc, RC_FIELDS, RC_COUNT, o4, fmt) < 0)
        return NULL;
    if (!PyCallable_Check(hyp) || dtn < 1 || dtn > WINDOW_MAX || ewmin < 0 || ewmin > COUNT_MAX) {
        PyErr_SetString(PyExc_ValueError, "configure_fix: a callable hypot, a window of 1 to 256, EW_MIN >= 0");
        return NULL;
    }
    for (int k = 0; k < A_COUNT; k++)
        if (ep_fx_a[k] == NULL && (ep_fx_a[k] = PyUnicode_InternFromString(A_NAMES[k])) == NULL)
            return NULL;
    for (int k = 0; k < X_COUNT; k++)
        if (ep_fx_x[k] == NULL && (ep_fx_x[k] = PyUnicode_InternFromString(X_NAMES[k])) == NULL)
            return NULL;
    memcpy(ep_fx_ep, o1, sizeof o1);
    memcpy(ep_fx_tl, o2, sizeof o2);
    memcpy(ep_fx_tb, o3, sizeof o3);
    memcpy(ep_fx_rc, o4, sizeof o4);
    memcpy(ep_fx_cf, o5, sizeof o5);
    Py_XSETREF(ep_fx_cfg, (PyTypeObject *)Py_NewRef(cf));
    Py_XSETREF(ep_fx_epoch, (PyTypeObject *)Py_NewRef(epo));
    Py_XSETREF(ep_fx_timeline, (PyTypeObject *)Py_NewRef(tl));
    Py_XSETREF(ep_fx_book, (PyTypeObject *)Py_NewRef(tb));
    Py_XSETREF(ep_fx_recent, (PyTypeObject *)Py_NewRef(rc));
    Py_XSETREF(ep_fx_deque, (PyTypeObject *)Py_NewRef(dq));
    Py_XSETREF(ep_fx_names, Py_NewRef(names));
    Py_XSETREF(ep_fx_none, Py_NewRef(none));
    Py_XSETREF(ep_fx_position, Py_NewRef(pos));
    Py_XSETREF(ep_fx_not_fix, Py_NewRef(notfix));
    Py_XSETREF(ep_fx_hypot, Py_NewRef(hyp));
    ep_fx_back_s = back, ep_fx_gap_factor = gapf, ep_fx_ew_a = ewa, ep_fx_dt_n = dtn, ep_fx_ew_min = ewmin;
    Py_XSETREF(ep_fx_stats, (PyTypeObject *)Py_NewRef(st)); /* last: fix_step's "configured" */
    Py_RETURN_NONE;
}

static void set_at(PyObject *o, Py_ssize_t off, PyObject *v) /* v stolen; the old value is a plain value */
{
    PyObject **p = (PyObject **)((char *)o + off);
    PyObject *old = *p;
    *p = v;
    Py_XDECREF(old);
}

static int set_attr(PyObject *d, int k, PyObject *v) /* d[name] = v (an existing key: no allocation) */
{
    return PyDict_SetItem(d, ep_fx_a[k], v);
}

/* Writes the plan: every new object made first, then the same state the Python code leaves. */
static int apply(PyObject *d, PyObject *ep, FixPlan *p)
{
    enum { M_T, M_ANCHOR, M_DT, M_IV, M_EPOCHS, M_COUNT, M_CREDIT, M_RN, M_ME, M_MN, M_VE, M_VN, M_LAST_FIX, M_N };
    PyObject *m[M_N] = {NULL}, **a = p->a, *abs_t = NULL;
    int rc = -1;
    if ((m[M_T] = PyFloat_FromDouble(p->t)) == NULL || (m[M_EPOCHS] = PyLong_FromLongLong(p->epochs + 1)) == NULL
        || (m[M_COUNT] = PyLong_FromLongLong(p->count + 1)) == NULL)
        goto done;
    if (p->has_u && (m[M_ANCHOR] = PyTuple_Pack(2, m[M_T], p->utc)) == NULL)
        goto done;
    if (p->win && ((m[M_DT] = PyFloat_FromDouble(p->dt2)) == NULL
                   || (!p->shortcut && p->iv_at < 0 && (m[M_IV] = PyFloat_FromDouble(p->iv)) == NULL)))
        goto done;
    if (p->credits && (m[M_CREDIT] = PyFloat_FromDouble(p->credit)) == NULL)
        goto done;
    if (p->fixed
        && ((m[M_RN] = PyLong_FromLongLong(p->rn)) == NULL || (m[M_ME] = PyFloat_FromDouble(p->rme)) == NULL
            || (m[M_MN] = PyFloat_FromDouble(p->rmn)) == NULL || (m[M_VE] = PyFloat_FromDouble(p->rve)) == NULL
            || (m[M_VN] = PyFloat_FromDouble(p->rvn)) == NULL || (abs_t = PyFloat_FromDouble(p->abs_t)) == NULL
            || (m[M_LAST_FIX] = PyTuple_Pack(5, m[M_T], abs_t, p->name, p->e_obj, p->n_obj)) == NULL))
        goto done;
    /* Timeline.step */
    PyObject *clock = a[A_CLOCK], *book = a[A_BOOK];
    set_at(clock, ep_fx_tl[TL_RESET], Py_NewRef(Py_False));
    set_at(clock, ep_fx_tl[TL_T], Py_NewRef(m[M_T]));
    if (p->has_u) {
        set_at(clock, ep_fx_tl[TL_UTC], Py_NewRef(p->utc));
        set_at(clock, ep_fx_tl[TL_UTC_T], Py_NewRef(m[M_T]));
    }
    set_at(clock, ep_fx_tl[TL_ABS], Py_NewRef(p->has_u ? p->utc : p->wall));
    set_at(clock, ep_fx_tl[TL_MONO], Py_NewRef(p->mono));
    set_at(clock, ep_fx_tl[TL_EP], Py_NewRef(ep));
    /* on_epoch up to the fix */
    if ((p->has_u && set_attr(d, A_ANCHOR, m[M_ANCHOR]) < 0) || set_attr(d, A_LAST_MONO, p->mono) < 0
        || set_attr(d, A_EPOCHS, m[M_EPOCHS]) < 0)
        goto done;
    if (p->win) {
        PyObject *srt = a[A_DTS_SORTED], *r;
        if (!p->shortcut && ((p->del >= 0 && PyList_SetSlice(srt, p->del, p->del + 1, NULL) < 0)
                             || PyList_Insert(srt, p->ins, m[M_DT]) < 0
                             || set_attr(d, A_IV, p->iv_at >= 0 ? PyList_GET_ITEM(srt, p->iv_at) : m[M_IV]) < 0))
            goto done;
        if ((r = PyObject_CallMethodOneArg(a[A_DTS], ep_fx_x[X_APPEND], m[M_DT])) == NULL)
            goto done;
        Py_DECREF(r);
    }
    if (PyDict_SetItem(a[A_COUNTS], p->name, m[M_COUNT]) < 0 || set_attr(d, A_CLOCK_LOST, Py_False) < 0
        || set_attr(d, p->fixed ? A_ACQUIRING : A_AWAIT_LOSS, Py_False) < 0)
        goto done;
    /* TimeBook.step and _account */
    if (p->credits && PyDict_SetItem(p->time, p->prev, m[M_CREDIT]) < 0)
        goto done;
    set_at(book, ep_fx_tb[TB_PREV], Py_NewRef(p->name));
    set_at(book, ep_fx_tb[TB_PREV_T], Py_NewRef(m[M_T]));
    if (set_attr(d, A_LAST_T, m[M_T]) < 0 || (p->fix_bucket && set_attr(d, A_GAP_SPLIT, Py_False) < 0))
        goto done;
    /* _jump */
    if (p->fixed) {
        PyObject *rec = p->rec;
        set_at(rec, ep_fx_rc[RC_N], Py_NewRef(m[M_RN]));
        set_at(rec, ep_fx_rc[RC_ME], Py_NewRef(m[M_ME]));
        set_at(rec, ep_fx_rc[RC_MN], Py_NewRef(m[M_MN]));
        set_at(rec, ep_fx_rc[RC_VE], Py_NewRef(m[M_VE]));
        set_at(rec, ep_fx_rc[RC_VN], Py_NewRef(m[M_VN]));
        if (set_attr(d, A_LAST_FIX, m[M_LAST_FIX]) < 0)
            goto done;
    }
    if (set_attr(d, A_CURRENT, p->name) < 0 || set_attr(d, A_PREV_T, m[M_T]) < 0)
        goto done;
    rc = 1;
done:
    for (int k = 0; k < M_N; k++)
        Py_XDECREF(m[k]);
    Py_XDECREF(abs_t);
    return rc;
}

/* fix_step(stats, ep) -> bool */
PyObject *ep_fix_step(PyObject *Py_UNUSED(mod), PyObject *const *args, Py_ssize_t nargs)
{
    if (!ep_ready(ep_fx_stats != NULL))
        return NULL;
    if (nargs != 2) {
        PyErr_SetString(PyExc_TypeError, "fix_step takes 2 arguments");
        return NULL;
    }
    PyObject *self = args[0], *ep = args[1], *d, *fn, *valid = NULL, *proj = NULL, *enu = NULL;
    int rc = 0;
    if (Py_TYPE(self) != ep_fx_stats || Py_TYPE(ep) != ep_fx_epoch)
        Py_RETURN_FALSE;
    if ((d = PyObject_GenericGetDict(self, NULL)) == NULL)
        return NULL;
    /* the Python calls first (the fix test, the projector): the checks then see their results */
    if ((fn = PyDict_GetItemWithError(d, ep_fx_a[A_VALID])) == NULL)
        goto done;
    Py_INCREF(fn);
    valid = PyObject_CallOneArg(fn, ep);
    Py_DECREF(fn);
    if (valid == NULL) { /* the Python code meets it again, at its place */
        PyErr_Clear();
        goto done;
    }
    if (valid == Py_True) {
        PyObject *lat = slot(ep, ep_fx_ep[EP_LAT]), *lon = slot(ep, ep_fx_ep[EP_LON]), *h = slot(ep, ep_fx_ep[EP_H]);
        /* `ep.h or 0.0`: only a non-zero float is passed on as it is */
        if (lat == NULL || lon == NULL || h == NULL || !PyFloat_CheckExact(h) || PyFloat_AS_DOUBLE(h) == 0.0
            || (proj = PyDict_GetItemWithError(d, ep_fx_a[A_PROJ])) == NULL || proj == Py_None)
            goto done;
        PyObject *ca[4] = {Py_NewRef(proj), Py_NewRef(lat), Py_NewRef(lon), Py_NewRef(h)};
        enu = PyObject_VectorcallMethod(ep_fx_x[X_ENU], ca, 4, NULL);
        for (int k = 0; k < 4; k++)
            Py_DECREF(ca[k]);
        if (enu == NULL) {
            PyErr_Clear();
            goto done;
        }
    }
    FixPlan p;
    rc = ep_fix_plan(d, ep, valid, enu, &p);
    if (rc == 1)
        rc = apply(d, ep, &p);
done:
    if (rc == 0 && PyErr_Occurred()) /* a failed look-up (no memory) */
        rc = -1;
    Py_DECREF(d);
    Py_XDECREF(valid);
    Py_XDECREF(enu);
    return rc < 0 ? NULL : Py_NewRef(rc ? Py_True : Py_False);
}
