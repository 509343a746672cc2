/* livefix.analysis._epochcore: the checks and the arithmetic of FixStats.on_epoch's running-session
 * case (ep_fix_plan); _epochcore_fix.c has the notes, the configuration and the writes.
 */
#include "_epochcore_fix.h"

/* The sorted window less srt[del] plus x (bisect_right, as insort places it) and its median, as
 * FixStats._add_dt computes them. */
static void window(PyObject *srt, Py_ssize_t qn, FixPlan *p)
{
    double w[WINDOW_MAX + 1];
    Py_ssize_t n = 0, i;
    for (Py_ssize_t k = 0; k < qn; k++)
        if (k != p->del)
            w[n++] = PyFloat_AS_DOUBLE(PyList_GET_ITEM(srt, k));
    Py_ssize_t lo = 0, hi = n;
    while (lo < hi) { /* bisect.insort_right: x < a[mid] */
        Py_ssize_t mid = (lo + hi) / 2;
        if (p->dt2 < w[mid])
            hi = mid;
        else
            lo = mid + 1;
    }
    p->ins = lo;
    for (Py_ssize_t k = n; k > lo; k--)
        w[k] = w[k - 1];
    w[lo] = p->dt2;
    n += 1, i = n / 2;
    p->iv_at = n % 2 ? i : -1;
    p->iv = n % 2 ? w[i] : (w[i - 1] + w[i]) / 2;
}

/* bisect.bisect_left(srt, x) on a list of exact floats */
static Py_ssize_t bisect_left(PyObject *srt, double x)
{
    Py_ssize_t lo = 0, hi = PyList_GET_SIZE(srt);
    while (lo < hi) {
        Py_ssize_t mid = (lo + hi) / 2;
        if (PyFloat_AS_DOUBLE(PyList_GET_ITEM(srt, mid)) < x)
            lo = mid + 1;
        else
            hi = mid;
    }
    return lo;
}

/* 1 when start_rec.on_fix(s, t, quality) would set a TTFF key (or when unsure): some item of the
 * start's _wait (key, want) has want None or equal to quality; 0 when on_fix changes nothing. */
static int waits_for(PyObject *wait, PyObject *quality)
{
    long long q, w;
    if (!count_of(quality, &q))
        return 1;
    for (Py_ssize_t k = 0; k < PyTuple_GET_SIZE(wait); k++) {
        PyObject *item = PyTuple_GET_ITEM(wait, k);
        if (!PyTuple_CheckExact(item) || PyTuple_GET_SIZE(item) != 2 || !count_of(PyTuple_GET_ITEM(item, 1), &w)
            || w == q)
            return 1;
    }
    return 0;
}

/* The checks and the arithmetic of the common path: 1 (p filled), 0 hand back, -1 error. d is the
 * instance dict, valid the fix test's answer, enu the projector's (NULL when not asked). */
int ep_fix_plan(PyObject *d, PyObject *ep, PyObject *valid, PyObject *enu, FixPlan *p)
{
    PyObject **a = p->a;
    for (int k = 0; k < A_COUNT; k++)
        if ((a[k] = PyDict_GetItemWithError(d, ep_fx_a[k])) == NULL)
            return PyErr_Occurred() ? -1 : 0;
    PyObject *clock = a[A_CLOCK], *book = a[A_BOOK], *sentences = slot(ep, ep_fx_ep[EP_SENTENCES]);
    PyObject *quality = slot(ep, ep_fx_ep[EP_QUALITY]);
    double mono, wall, u = 0.0, t0, tu = 0.0, tut, tm, pt = 0.0, iv;
    int has_tu, has_pt;
    p->mono = slot(ep, ep_fx_ep[EP_MONO]), p->wall = slot(ep, ep_fx_ep[EP_WALL]), p->utc = slot(ep, ep_fx_ep[EP_UTC]);
    if (Py_TYPE(clock) != ep_fx_timeline || Py_TYPE(book) != ep_fx_book || !is_float(p->mono, &mono)
        || !is_float(p->wall, &wall) || p->utc == NULL || !float_or_none(p->utc, &u, &p->has_u)
        || quality == NULL || !PyLong_CheckExact(quality) || sentences == NULL || !PyTuple_CheckExact(sentences)
        || !is_float(slot(clock, ep_fx_tl[TL_T]), &t0) || !float_or_none(slot(clock, ep_fx_tl[TL_UTC]), &tu, &has_tu)
        || !is_float(slot(clock, ep_fx_tl[TL_UTC_T]), &tut) || !is_float(slot(clock, ep_fx_tl[TL_MONO]), &tm)
        || a[A_RESTART_AT] != Py_None || a[A_CLOCK_LOST] != Py_False || !float_or_none(a[A_PREV_T], &pt, &has_pt)
        || !is_float(a[A_IV], &iv))
        return 0;
    /* a position sentence among the sentences (or no sentences at all) */
    Py_ssize_t ns = PyTuple_GET_SIZE(sentences);
    int pos = ns == 0;
    for (Py_ssize_t k = 0; k < ns && !pos; k++) {
        PyObject *s = PyTuple_GET_ITEM(sentences, k);
        if (!PyUnicode_CheckExact(s))
            return 0;
        if ((pos = PySet_Contains(ep_fx_position, s)) < 0)
            return -1;
    }
    if (!pos)
        return 0;
    if (Py_TYPE(a[A_GAPS_AT]) != ep_fx_deque || PyObject_Size(a[A_GAPS_AT]) != 0)
        return PyErr_Occurred() ? -1 : 0; /* a data gap noted: _after_gap */
    /* Timeline.step */
    double dt = -1.0;
    if (p->has_u && has_tu) {
        double dd = u - tu;
        if (0.0 <= dd && dd < 86400.0) {
            dt = tut + dd - t0;
            if (!(dt > 0.0))
                dt = 0.0;
        } else if (dd < -ep_fx_back_s) {
            return 0; /* the receiver clock went back: a restart perhaps */
        }
    }
    if (dt < 0.0) { /* max(0.0, mono - _mono) */
        double x = mono - tm;
        dt = x > 0.0 ? x : 0.0;
    }
    double t = p->t = t0 + dt;
    /* the label time */
    if (p->has_u) {
        p->abs_t = u + (t - t);
    } else if (a[A_ANCHOR] == Py_None) {
        p->abs_t = wall;
    } else {
        double a0, a1;
        PyObject *an = a[A_ANCHOR];
        if (!PyTuple_CheckExact(an) || PyTuple_GET_SIZE(an) != 2 || !is_float(PyTuple_GET_ITEM(an, 0), &a0)
            || !is_float(PyTuple_GET_ITEM(an, 1), &a1))
            return 0;
        p->abs_t = a1 + (t - a0);
    }
    if (!count_of(a[A_EPOCHS], &p->epochs) || p->epochs >= COUNT_MAX)
        return 0;
    /* the interval window */
    PyObject *q = a[A_DTS], *srt = a[A_DTS_SORTED];
    p->win = has_pt && t > pt, p->shortcut = 0, p->del = -1, p->iv = iv, p->dt2 = t - pt;
    if (p->win) {
        Py_ssize_t qn;
        if (Py_TYPE(q) != ep_fx_deque || !PyList_CheckExact(srt) || (qn = PyObject_Size(q)) < 0)
            return PyErr_Occurred() ? -1 : 0;
        if (qn > ep_fx_dt_n || PyList_GET_SIZE(srt) != qn)
            return 0;
        for (Py_ssize_t k = 0; k < qn; k++)
            if (!PyFloat_CheckExact(PyList_GET_ITEM(srt, k)))
                return 0;
        if (qn == ep_fx_dt_n) {
            double q0 = 0.0;
            PyObject *first = PySequence_GetItem(q, 0);
            if (first == NULL)
                return -1;
            int ok = is_float(first, &q0);
            Py_DECREF(first);
            if (!ok)
                return 0;
            p->shortcut = q0 == p->dt2;
            if (!p->shortcut && (p->del = bisect_left(srt, q0)) >= qn)
                return 0; /* an IndexError in the Python code */
        }
        if (!p->shortcut)
            window(srt, qn, p);
    }
    /* the fix: FIX_NAMES.get(quality, "none") if fixed else "none" */
    p->fixed = valid == Py_True;
    if (!p->fixed && valid != Py_False)
        return 0;
    PyObject *name = ep_fx_none, *s = a[A_START], *cnt, *q0v, *wait;
    if (p->fixed && (name = PyDict_GetItemWithError(ep_fx_names, quality)) == NULL) {
        if (PyErr_Occurred())
            return -1;
        name = ep_fx_none;
    }
    p->name = name;
    if (!PyUnicode_CheckExact(name) || !PyDict_CheckExact(a[A_COUNTS]) || !PyDict_CheckExact(s))
        return 0;
    if ((cnt = PyDict_GetItemWithError(a[A_COUNTS], name)) == NULL || (q0v = PyDict_GetItemWithError(s, ep_fx_x[X_Q0])) == NULL
        || (wait = PyDict_GetItemWithError(s, ep_fx_x[X_WAIT])) == NULL)
        return PyErr_Occurred() ? -1 : 0;
    if (!count_of(cnt, &p->count) || p->count >= COUNT_MAX || q0v == Py_None)
        return 0; /* (_q0 None: the start's first epoch) */
    if (p->fixed ? a[A_AWAIT_LOSS] != Py_False || !PyTuple_CheckExact(wait) || waits_for(wait, quality)
                 : a[A_ACQUIRING] != Py_False)
        return 0; /* a restart being applied, or a TTFF to set */
    /* TimeBook.step(t, name, iv, False) */
    PyObject *prev = p->prev = slot(book, ep_fx_tb[TB_PREV]), *time = p->time = slot(book, ep_fx_tb[TB_TIME]);
    double bpt;
    if (prev == NULL || !PyUnicode_CheckExact(prev) || !is_float(slot(book, ep_fx_tb[TB_PREV_T]), &bpt) || time == NULL
        || !PyDict_CheckExact(time))
        return 0;
    double dt3 = t - bpt;
    p->credits = !(dt3 <= 0.0);
    if (p->credits) {
        int nf = PySet_Contains(ep_fx_not_fix, prev);
        if (nf < 0)
            return -1;
        if (!nf && !str_eq(prev, ep_fx_none) && dt3 > ep_fx_gap_factor * p->iv)
            return 0; /* epochs stopped coming while fixed */
        PyObject *had = PyDict_GetItemWithError(time, prev);
        double h0 = 0.0;
        if ((had == NULL && PyErr_Occurred()))
            return -1;
        if (had != NULL && !is_float(had, &h0))
            return 0;
        p->credit = h0 + dt3;
    }
    /* _account: no outage begins or ends, no fix change */
    PyObject *lf = a[A_LAST_FIX], *lfname = NULL;
    double lf3 = 0.0, lf4 = 0.0;
    if (lf != Py_None && (!PyTuple_CheckExact(lf) || PyTuple_GET_SIZE(lf) != 5
                          || !PyUnicode_CheckExact(lfname = PyTuple_GET_ITEM(lf, 2))
                          || !is_float(PyTuple_GET_ITEM(lf, 3), &lf3) || !is_float(PyTuple_GET_ITEM(lf, 4), &lf4)))
        return 0;
    p->fix_bucket = !str_eq(name, ep_fx_none);
    if (p->fix_bucket ? a[A_LOST_AT] != Py_None || (lfname != NULL && !str_eq(lfname, name))
                      : lfname != NULL && a[A_LOST_AT] == Py_None)
        return 0;
    if (!p->fixed)
        return 1;
    /* _jump without a jump */
    PyObject *rec, *cur = a[A_CURRENT], *cfg = a[A_CFG];
    long long qv;
    if (a[A_FIX_MARKED] != Py_True || !count_of(quality, &qv) || (qv == 4 && a[A_RTK_MARKED] != Py_True)
        || enu == NULL || !PyTuple_CheckExact(enu) || PyTuple_GET_SIZE(enu) != 3
        || !is_float(p->e_obj = PyTuple_GET_ITEM(enu, 0), &p->e) || !is_float(p->n_obj = PyTuple_GET_ITEM(enu, 1), &p->n)
        || !PyDict_CheckExact(a[A_RECENT]) || !PyUnicode_CheckExact(cur) || Py_TYPE(cfg) != ep_fx_cfg)
        return 0;
    if ((rec = p->rec = PyDict_GetItemWithError(a[A_RECENT], name)) == NULL)
        return PyErr_Occurred() ? -1 : 0;
    long long rn;
    double me, mn, ve, vn, e = p->e, n = p->n;
    if (Py_TYPE(rec) != ep_fx_recent || !count_of(slot(rec, ep_fx_rc[RC_N]), &rn) || rn < 0 || rn >= COUNT_MAX
        || !is_float(slot(rec, ep_fx_rc[RC_ME]), &me) || !is_float(slot(rec, ep_fx_rc[RC_MN]), &mn)
        || !is_float(slot(rec, ep_fx_rc[RC_VE]), &ve) || !is_float(slot(rec, ep_fx_rc[RC_VN]), &vn))
        return 0;
    if (lfname != NULL && str_eq(lfname, name) && str_eq(cur, name)) { /* the jump test */
        double stp, lim = INFINITY, jm, js;
        PyObject *hv[2] = {PyFloat_FromDouble(e - lf3), PyFloat_FromDouble(n - lf4)}, *r = NULL;
        if (hv[0] != NULL && hv[1] != NULL)
            r = PyObject_Vectorcall(ep_fx_hypot, hv, 2, NULL);
        Py_XDECREF(hv[0]);
        Py_XDECREF(hv[1]);
        if (r == NULL)
            return -1;
        int ok = is_float(r, &stp);
        Py_DECREF(r);
        if (!ok)
            return 0;
        if (rn >= ep_fx_ew_min) { /* max(jump_m, jump_sigma * sigma) */
            PyObject *jmo = slot(cfg, ep_fx_cf[CF_JUMP_M]), *jso = slot(cfg, ep_fx_cf[CF_JUMP_SIGMA]);
            if (jmo == NULL || jso == NULL || !num_of(jmo, &jm) || !num_of(jso, &js) || !(ve + vn >= 0.0 || ve + vn != ve + vn))
                return 0; /* (math.sqrt raises on a negative) */
            double ks = js * sqrt(ve + vn);
            lim = ks > jm ? ks : jm;
        }
        if (stp > lim)
            return 0; /* a jump */
    }
    /* _Recent.add(e, n) */
    double ra = 1.0 / (double)(rn + 1), de = e - me, dn = n - mn;
    if (ep_fx_ew_a > ra)
        ra = ep_fx_ew_a;
    p->rn = rn + 1;
    p->rme = me + ra * de;
    p->rmn = mn + ra * dn;
    p->rve = (1 - ra) * (ve + ra * de * de);
    p->rvn = (1 - ra) * (vn + ra * dn * dn);
    return 1;
}

