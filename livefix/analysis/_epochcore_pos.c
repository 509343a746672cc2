/* livefix.analysis._epochcore: the common case of livefix/analysis/position.py
 * (PositionStats.on_epoch) as position_epoch(); the module itself is in _epochcore.c.
 *
 * Why: nearly every epoch of a standing receiver takes the same path: the timeline was stepped by
 * the fix statistics, the anchor projector exists, the height is in the segment's datum, the
 * receiver was not moving; the epoch is projected, classed by MotionDetector.update, added to
 * Convergence and to the jump check and appended to its fix type's Track. In Python most of that
 * time is the interpreter. Here it is done with the same float operations in the same order
 * (math.hypot is called as the Python code calls it), the same objects stored in the same places.
 *
 * Hand-over: position_epoch first checks, changing nothing, that the epoch takes that path (the
 * preconditions above, exact types); else it returns False and the Python code runs the whole
 * reference body. Past that point every step is done in C when its own state has the expected
 * shape, else by calling the Python method the reference calls there (MotionDetector.update,
 * Convergence.add, Jumps.check, Track._settle, PositionStats._better and ._session_ref), so rare
 * branches (head buffer full, an excursion, the automatic reference) run the reference itself.
 * MotionDetector.update is in _epochcore_motion.c; what the two share is in _epochcore_pos.h.
 * tests/analysis/test_position_native.py compares the two step by step.
 */
#include "_epochcore_pos.h"

/* the slots read and written, per type (their offsets found by configure_position) */
enum { T_POS, T_TIMELINE, T_EPOCH, T_MOTION, T_CONV, T_TRACK, T_MOMENTS, T_PROJ, T_COUNT };
enum { P_CLOCK, P_WAS_MOVING, P_EPOCHS, P_VALID, P_CONV, P_DATUM, P_ANCHOR_P, P_MOTION, P_JUMPS, P_TRACKS,
       P_FIXED_NOW, P_LAST, P_SITE_EN, P_AUTO, P_COUNT };
enum { L_T, L_EP, L_ABS, L_COUNT };
enum { Q_QUALITY, Q_LAT, Q_LON, Q_H, Q_ALT, Q_SPEED, Q_SL, Q_SO, Q_SA, Q_HDOP, Q_COUNT };
enum { C_N, C_PEND, C_FIRST_FIX, C_COUNT };
enum { R_PEND, R_MOM, R_COUNT };
static const char *POS_F[P_COUNT] = {"clock", "_was_moving", "_epochs", "_valid", "conv", "h_datum", "_anchor_p",
    "motion", "jumps", "tracks", "_fixed_now", "_last", "_site_en", "_auto"};
static const char *TL_F[L_COUNT] = {"t", "_ep", "abs_time"};
static const char *EP_F[Q_COUNT] = {"quality", "lat", "lon", "h", "alt_msl", "speed_mps", "sigma_lat", "sigma_lon",
    "sigma_alt", "hdop"};
static const char *CV_F[C_COUNT] = {"n", "_pend", "first_fix"};
static const char *TR_F[R_COUNT] = {"_pend", "_mom"};
static const char *MO_F[1] = {"n"};

/* names of the methods called (interned by configure_position) */
enum { N_ENU, N_APPEND, N_ADD, N_FLUSH, N_SETTLE, N_CHECK, N_CORE, N_TARGET,
       N_BETTER, N_SESSION_REF, N_ELLIPSOIDAL, N_MSL, N_N, N_MOVING, N_PENDN, N_COUNT };
static const char *NAMES[N_COUNT] = {"enu", "append", "add", "_flush", "_settle",
    "check", "_core", "_target", "_better", "_session_ref", "ellipsoidal", "msl", "n", "moving", "_pend"};

/* module state, set by configure_position */
static PyObject *ps_name[N_COUNT];
static PyTypeObject *ps_type[T_COUNT];
static Py_ssize_t ps_pos[P_COUNT], ps_tl[L_COUNT], ps_ep[Q_COUNT], ps_cv[C_COUNT], ps_tr[R_COUNT],
    ps_mo[1];
static PyObject *ps_check, *ps_fix_names, *ps_none_fix, *ps_nan, *ps_one, *ps_zero;
static long long ps_head_cap, ps_conv_batch, ps_track_batch, ps_settle_n;

PyObject *ep_configure_position(PyObject *Py_UNUSED(mod), PyObject *args)
{
    PyObject *ty[T_COUNT], *dq, *check, *names, *none, *nan, *hyp;
    long long head, cb, tb, settle, confirm;
    Py_ssize_t pos[P_COUNT], tl[L_COUNT], epo[Q_COUNT], cv[C_COUNT], tr[R_COUNT], mo[1];
    const char *fmt = "%s is not a slot of %R";
    if (!PyArg_ParseTuple(args, "(O!O!O!O!O!O!O!O!)O!OO!UO!OLLLLL", &PyType_Type, &ty[0], &PyType_Type, &ty[1],
                          &PyType_Type, &ty[2], &PyType_Type, &ty[3], &PyType_Type, &ty[4], &PyType_Type, &ty[5],
                          &PyType_Type, &ty[6], &PyType_Type, &ty[7], &PyType_Type, &dq, &check, &PyDict_Type,
                          &names, &none, &PyFloat_Type, &nan, &hyp, &head, &cb, &tb, &settle, &confirm)
        || kit_slot_offsets(ty[T_POS], POS_F, P_COUNT, pos, fmt) < 0
        || kit_slot_offsets(ty[T_TIMELINE], TL_F, L_COUNT, tl, fmt) < 0
        || kit_slot_offsets(ty[T_EPOCH], EP_F, Q_COUNT, epo, fmt) < 0
        || kit_slot_offsets(ty[T_CONV], CV_F, C_COUNT, cv, fmt) < 0
        || kit_slot_offsets(ty[T_TRACK], TR_F, R_COUNT, tr, fmt) < 0
        || kit_slot_offsets(ty[T_MOMENTS], MO_F, 1, mo, fmt) < 0)
        return NULL;
    if (!PyCallable_Check(hyp) || !PyFunction_Check(check) || head < 2 || cb < 1 || tb < 1 || settle < 0
        || settle > COUNT_MAX || confirm < 1 || confirm > 1000) {
        PyErr_SetString(PyExc_ValueError, "configure_position: a callable hypot, a function check and positive sizes");
        return NULL;
    }
    for (int k = 0; k < N_COUNT; k++)
        if (ps_name[k] == NULL && (ps_name[k] = PyUnicode_InternFromString(NAMES[k])) == NULL)
            return NULL;
    if (ep_motion_configure(ty[T_MOTION], dq, hyp, confirm) < 0)
        return NULL;
    PyObject *one = PyFloat_FromDouble(1.0), *zero = PyFloat_FromDouble(0.0);
    if (one == NULL || zero == NULL) {
        Py_XDECREF(one);
        Py_XDECREF(zero);
        return NULL;
    }
    memcpy(ps_pos, pos, sizeof pos);
    memcpy(ps_tl, tl, sizeof tl);
    memcpy(ps_ep, epo, sizeof epo);
    memcpy(ps_cv, cv, sizeof cv);
    memcpy(ps_tr, tr, sizeof tr);
    memcpy(ps_mo, mo, sizeof mo);
    for (int k = 0; k < T_COUNT; k++)
        Py_XSETREF(ps_type[k], (PyTypeObject *)Py_NewRef(ty[k]));
    Py_XSETREF(ps_check, Py_NewRef(check));
    Py_XSETREF(ps_fix_names, Py_NewRef(names));
    Py_XSETREF(ps_none_fix, Py_NewRef(none));
    Py_XSETREF(ps_nan, Py_NewRef(nan));
    Py_XSETREF(ps_one, one);
    Py_XSETREF(ps_zero, zero);
    ps_head_cap = head, ps_conv_batch = cb, ps_track_batch = tb, ps_settle_n = settle;
    Py_RETURN_NONE;
}

/* Convergence.add(t, e, n, u, fixed, ps._target) while the head buffer has room: -1 with an error */
static int conv_add(PyObject *ps, PyObject *cv, PyObject *t, PyObject *e, PyObject *n, PyObject *u, int fixed)
{
    PyObject *pend = Py_TYPE(cv) == ps_type[T_CONV] ? sget(cv, ps_cv[C_PEND]) : NULL, *ff, *cnt;
    long long k;
    int res = -1;
    if (pend == NULL || !PyList_CheckExact(pend) || (cnt = slot(cv, ps_cv[C_N])) == NULL || !counter(cnt, &k)
        || k >= ps_head_cap - 1 || (ff = slot(cv, ps_cv[C_FIRST_FIX])) == NULL) {
        /* the head fills (or odd state): the reference */
        PyObject *tg = PyObject_GetAttr(ps, ps_name[N_TARGET]);
        if (tg != NULL) {
            PyObject *a[6] = {t, e, n, u, fixed ? Py_True : Py_False, tg};
            res = call_truth(cv, ps_name[N_ADD], a, 6) < 0 ? -1 : 0;
            Py_DECREF(tg);
        }
        goto done;
    }
    if (fixed && ff == Py_None && sset(cv, ps_cv[C_FIRST_FIX], Py_NewRef(t)) < 0)
        goto done;
    PyObject *row = PyTuple_Pack(5, t, e, n, u, fixed ? ps_one : ps_zero);
    if (row == NULL)
        goto done;
    int bad = PyList_Append(pend, row);
    Py_DECREF(row);
    if (bad < 0 || sset(cv, ps_cv[C_N], PyLong_FromLongLong(k + 1)) < 0)
        goto done;
    res = PyList_GET_SIZE(pend) >= ps_conv_batch ? call_void(cv, ps_name[N_FLUSH]) : 0;
done:
    Py_XDECREF(pend);
    return res;
}

/* float(v), NaN for None (a new reference) */
static PyObject *sigma(PyObject *v)
{
    if (v == NULL) {
        PyErr_SetString(PyExc_AttributeError, "an epoch field is not set");
        return NULL;
    }
    return v == Py_None ? Py_NewRef(ps_nan) : PyNumber_Float(v);
}

/* the epoch's height in the segment's datum (a new reference) when PositionStats._height would give
 * it without changing anything; else NULL */
static PyObject *height(PyObject *ep, PyObject *datum)
{
    PyObject *h = slot(ep, ps_ep[Q_H]), *alt = slot(ep, ps_ep[Q_ALT]);
    double a;
    if (h == NULL || datum == NULL || !PyUnicode_CheckExact(datum))
        return NULL;
    if (PyFloat_CheckExact(h))
        return PyUnicode_Compare(datum, ps_name[N_ELLIPSOIDAL]) == 0 ? Py_NewRef(h) : NULL;
    if (h == Py_None && is_float(alt, &a) && isfinite(a) && fabs(a) < 1e7
        && PyUnicode_Compare(datum, ps_name[N_MSL]) == 0)
        return Py_NewRef(alt);
    return NULL;
}

/* the truth of jumps.check(fix, t, abs_t, e, n, u): its settled case directly when the method is the
 * class's own and its core is this module; -1 with an error set */
static int jumps_check(PyObject *mod, PyObject *jumps, PyObject *fix, PyObject *t, PyObject *abs_t, PyObject *e,
                       PyObject *n, PyObject *u)
{
    PyObject *m = PyObject_GetAttr(jumps, ps_name[N_CHECK]), *core = NULL;
    if (m == NULL)
        return -1;
    if (PyMethod_Check(m) && PyMethod_GET_FUNCTION(m) == ps_check && PyMethod_GET_SELF(m) == jumps
        && (core = PyObject_GetAttr(jumps, ps_name[N_CORE])) != NULL && core == mod) {
        PyObject *ja[5] = {jumps, fix, e, n, u}, *r = ep_jumps_settled(mod, ja, 5);
        int in = r == Py_True;
        Py_XDECREF(r);
        if (in || r == NULL) {
            Py_DECREF(core);
            Py_DECREF(m);
            return r == NULL ? -1 : 1;
        }
    }
    Py_XDECREF(core);
    if (PyErr_Occurred()) {
        Py_DECREF(m);
        return -1;
    }
    PyObject *ca[6] = {fix, t, abs_t, e, n, u}, *r = PyObject_Vectorcall(m, ca, 6, NULL);
    Py_DECREF(m);
    int in = r == NULL ? -1 : PyObject_IsTrue(r);
    Py_XDECREF(r);
    return in;
}

/* trk.n == SETTLE_EPOCHS (Track.n: its moments' count and the rows waiting); -1 with an error set */
static int settle_due(PyObject *trk)
{
    PyObject *mom, *cnt, *pend;
    long long k;
    if (Py_TYPE(trk) == ps_type[T_TRACK] && (mom = slot(trk, ps_tr[R_MOM])) != NULL
        && Py_TYPE(mom) == ps_type[T_MOMENTS] && (cnt = slot(mom, ps_mo[0])) != NULL && counter(cnt, &k)
        && (pend = slot(trk, ps_tr[R_PEND])) != NULL && PyList_CheckExact(pend))
        return k + PyList_GET_SIZE(pend) == ps_settle_n;
    PyObject *s = PyLong_FromLongLong(ps_settle_n), *c = s == NULL ? NULL : PyObject_GetAttr(trk, ps_name[N_N]);
    int r = c == NULL ? -1 : PyObject_RichCompareBool(c, s, Py_EQ);
    Py_XDECREF(c);
    Py_XDECREF(s);
    return r;
}
PyObject *ep_position_epoch(PyObject *mod, PyObject *const *a, Py_ssize_t nargs)
{
    if (!ep_ready(ps_type[T_POS] != NULL))
        return NULL;
    if (nargs != 2) {
        PyErr_SetString(PyExc_TypeError, "position_epoch takes 2 arguments");
        return NULL;
    }
    enum { V_CLOCK, V_T, V_CONV, V_OK, V_H, V_AP, V_ENU, V_MOTION, V_JUMPS, V_TRACKS, V_LAT, V_LON, V_SPEED, V_TRK,
           V_FIX, V_COUNT };
    PyObject *self = a[0], *ep = a[1], *v[V_COUNT] = {NULL}, *res = Py_False, *fix, *valid, *x;
    long long epochs;
    /* ---- the preconditions, nothing changed ---- */
    if (Py_TYPE(self) != ps_type[T_POS] || Py_TYPE(ep) != ps_type[T_EPOCH]
        || (x = slot(self, ps_pos[P_CLOCK])) == NULL || Py_TYPE(x) != ps_type[T_TIMELINE]
        || slot(x, ps_tl[L_EP]) != ep || !fl(slot(v[V_CLOCK] = Py_NewRef(x), ps_tl[L_T]))
        || slot(self, ps_pos[P_WAS_MOVING]) != Py_False
        || (x = slot(self, ps_pos[P_EPOCHS])) == NULL || !counter(x, &epochs)
        || (v[V_CONV] = sget(self, ps_pos[P_CONV])) == NULL || (valid = slot(self, ps_pos[P_VALID])) == NULL)
        goto done;
    v[V_T] = Py_NewRef(slot(v[V_CLOCK], ps_tl[L_T]));
    /* valid_fix is pure and fix_memo answers the same again: asking first changes nothing */
    if ((v[V_OK] = PyObject_CallOneArg(valid, ep)) == NULL) {
        PyErr_Clear();
        goto done;
    }
    PyObject *t = v[V_T];
    if (v[V_OK] == Py_False) {
        res = sset(self, ps_pos[P_EPOCHS], PyLong_FromLongLong(epochs + 1)) < 0
                  || sset(self, ps_pos[P_FIXED_NOW], Py_NewRef(Py_False)) < 0
                  || conv_add(self, v[V_CONV], t, ps_nan, ps_nan, ps_nan, 0) < 0
              ? NULL : Py_True;
        goto done;
    }
    PyObject *q = slot(ep, ps_ep[Q_QUALITY]);
    if (v[V_OK] != Py_True || q == NULL || !PyLong_CheckExact(q)
        || !fl(v[V_LAT] = sget(ep, ps_ep[Q_LAT])) || !fl(v[V_LON] = sget(ep, ps_ep[Q_LON]))
        || (v[V_H] = height(ep, slot(self, ps_pos[P_DATUM]))) == NULL
        || (v[V_AP] = sget(self, ps_pos[P_ANCHOR_P])) == NULL || Py_TYPE(v[V_AP]) != ps_type[T_PROJ]
        || (v[V_MOTION] = sget(self, ps_pos[P_MOTION])) == NULL || (v[V_JUMPS] = sget(self, ps_pos[P_JUMPS])) == NULL
        || (v[V_TRACKS] = sget(self, ps_pos[P_TRACKS])) == NULL || !PyDict_CheckExact(v[V_TRACKS])
        || (v[V_SPEED] = sget(ep, ps_ep[Q_SPEED])) == NULL)
        goto done;
    /* FIX_NAMES.get(quality, "none"): an exact int key runs no Python code */
    if ((fix = PyDict_GetItemWithError(ps_fix_names, q)) == NULL && PyErr_Occurred()) {
        PyErr_Clear();
        goto done;
    }
    fix = v[V_FIX] = Py_NewRef(fix == NULL ? ps_none_fix : fix); /* held: Python code runs below */
    /* the projection memo keeps the latest answer: asking first changes nothing the reference sees */
    PyObject *pa[4] = {v[V_AP], v[V_LAT], v[V_LON], v[V_H]}, *enu;
    enu = v[V_ENU] = PyObject_VectorcallMethod(ps_name[N_ENU], pa, 4, NULL);
    if (enu == NULL || !PyTuple_CheckExact(enu) || PyTuple_GET_SIZE(enu) != 3
        || !PyFloat_CheckExact(PyTuple_GET_ITEM(enu, 0)) || !PyFloat_CheckExact(PyTuple_GET_ITEM(enu, 1))
        || !PyFloat_CheckExact(PyTuple_GET_ITEM(enu, 2))) {
        PyErr_Clear();
        goto done;
    }
    /* ---- the reference's steps, in its order ---- */
    res = NULL;
    PyObject *e = PyTuple_GET_ITEM(enu, 0), *n = PyTuple_GET_ITEM(enu, 1), *u = PyTuple_GET_ITEM(enu, 2);
    if (sset(self, ps_pos[P_EPOCHS], PyLong_FromLongLong(epochs + 1)) < 0
        || sset(self, ps_pos[P_FIXED_NOW], Py_NewRef(Py_True)) < 0)
        goto done;
    int moving = ep_motion_update(v[V_MOTION], t, e, n, v[V_SPEED]);
    if (moving < 0 || sset(self, ps_pos[P_LAST], PyTuple_Pack(3, v[V_LAT], v[V_LON], v[V_H])) < 0)
        goto done;
    if (moving) { /* _was_moving = False or motion.moving */
        if (sset(self, ps_pos[P_WAS_MOVING], PyObject_GetAttr(v[V_MOTION], ps_name[N_MOVING])) == 0)
            res = Py_True;
        goto done;
    }
    if (sset(self, ps_pos[P_SITE_EN], PyTuple_Pack(2, e, n)) < 0 || conv_add(self, v[V_CONV], t, e, n, u, 1) < 0)
        goto done;
    PyObject *abs_t = sget(v[V_CLOCK], ps_tl[L_ABS]);
    if (abs_t == NULL) {
        PyErr_SetString(PyExc_AttributeError, "abs_time");
        goto done;
    }
    int in = jumps_check(mod, v[V_JUMPS], fix, t, abs_t, e, n, u);
    Py_DECREF(abs_t);
    if (in <= 0) { /* inside a jump or its re-convergence: kept out of the scatter */
        res = in < 0 ? NULL : Py_True;
        goto done;
    }
    /* the fix type's Track; a new one from the Python class */
    PyObject *trk = PyDict_GetItemWithError(v[V_TRACKS], fix);
    if (trk != NULL)
        v[V_TRK] = Py_NewRef(trk);
    else if (PyErr_Occurred() || (trk = v[V_TRK] = PyObject_CallNoArgs((PyObject *)ps_type[T_TRACK])) == NULL
             || PyDict_SetItem(v[V_TRACKS], fix, trk) < 0)
        goto done;
    PyObject *pend = PyObject_GetAttr(trk, ps_name[N_PENDN]), *row = NULL;
    if (pend == NULL)
        goto done;
    PyObject *f[8] = {Py_NewRef(t), Py_NewRef(e), Py_NewRef(n), Py_NewRef(u), NULL, NULL, NULL, NULL};
    int bad = 0;
    for (int k = 0; k < 4 && !bad; k++)
        bad = (f[4 + k] = sigma(slot(ep, ps_ep[Q_SL + k]))) == NULL;
    if (!bad && (row = PyTuple_New(8)) != NULL)
        for (int k = 0; k < 8; k++)
            PyTuple_SET_ITEM(row, k, f[k]);
    else
        for (int k = 0; k < 8; k++)
            Py_XDECREF(f[k]);
    if (row != NULL)
        bad = PyList_CheckExact(pend) ? PyList_Append(pend, row) : call_truth(pend, ps_name[N_APPEND], &row, 1);
    Py_XDECREF(row);
    Py_ssize_t len = row == NULL || bad < 0 ? -1 : PyObject_Size(pend);
    Py_DECREF(pend);
    if (len >= ps_track_batch) { /* Track._settle: in C (_epochcore_track.c) unless it hands back */
        int st = ep_track_settle(trk);
        if (st == 0)
            st = call_void(trk, ps_name[N_SETTLE]);
        if (st < 0)
            goto done;
    }
    if (len < 0)
        goto done;
    /* the automatic reference: the reference's own methods when its first epochs are complete */
    x = slot(self, ps_pos[P_AUTO]);
    int go = x == NULL ? -1 : PyObject_IsTrue(x);
    if (go > 0)
        go = settle_due(trk);
    if (go > 0)
        go = call_truth(self, ps_name[N_BETTER], &fix, 1);
    if (go > 0) {
        PyObject *sa[2] = {fix, trk};
        go = call_truth(self, ps_name[N_SESSION_REF], sa, 2) < 0 ? -1 : 0;
    }
    if (go >= 0)
        res = Py_True;
    else if (x == NULL)
        PyErr_SetString(PyExc_AttributeError, "_auto");
done:
    for (int k = 0; k < V_COUNT; k++)
        Py_XDECREF(v[k]);
    return Py_XNewRef(res);
}
