/* livefix.analysis._epochcore: MotionDetector.update (livefix/analysis/motion.py) for the C step of
 * PositionStats.on_epoch (_epochcore_pos.c); the module itself is in _epochcore.c.
 *
 * The same float operations in the same order (math.hypot called as the Python code calls it); the
 * windows stay the detector's deques, changed through their own methods. The windows are read first,
 * before anything changes: a detector of another shape (other types, an odd window or item) is
 * handed to its own update(), the reference.
 */
#include "_epochcore_pos.h"

enum { M_FULL, M_HALF, M_W, M_HW, M_NEED, M_SLOW, M_FASTM, M_HOLD, M_MOVING, M_STILL, M_FIXED, M_MEP, M_STATIC,
       M_MOVS, M_MOVES, M_PREV, M_MAX, M_RUN, M_FAST, M_COUNT };
static const char *MD_F[M_COUNT] = {"_full", "_half", "_w", "_hw", "_need", "_slow_mps", "_fast_mps", "_hold",
    "moving", "_still_since", "fixed", "moving_epochs", "static_s", "moving_s", "moves", "_prev", "max_speed", "_run",
    "_fast"};
enum { N_UPDATE, N_APPEND, N_POPLEFT, N_MAXLEN, N_COUNT };
static const char *NAMES[N_COUNT] = {"update", "append", "popleft", "maxlen"};

/* module state, set by ep_motion_configure */
static PyObject *md_name[N_COUNT], *md_deque, *md_hypot;
static PyTypeObject *md_type;
static Py_ssize_t ps_md[M_COUNT];
static long long md_confirm;

int ep_motion_configure(PyObject *type, PyObject *deque, PyObject *hypot, long long confirm)
{
    Py_ssize_t off[M_COUNT];
    if (!PyType_Check(type) || !PyType_Check(deque)
        || kit_slot_offsets(type, MD_F, M_COUNT, off, "%s is not a slot of %R") < 0)
        return PyErr_Occurred() ? -1 : (PyErr_SetString(PyExc_TypeError, "configure: types expected"), -1);
    for (int k = 0; k < N_COUNT; k++)
        if (md_name[k] == NULL && (md_name[k] = PyUnicode_InternFromString(NAMES[k])) == NULL)
            return -1;
    memcpy(ps_md, off, sizeof off);
    Py_XSETREF(md_type, (PyTypeObject *)Py_NewRef(type));
    Py_XSETREF(md_deque, Py_NewRef(deque));
    Py_XSETREF(md_hypot, Py_NewRef(hypot));
    md_confirm = confirm;
    return 0;
}

/* dq[i] as an exact 3-tuple of exact floats: 1 and its values, else 0 (no error set) */
static int item3(PyObject *dq, Py_ssize_t i, double v[3])
{
    PyObject *x = PySequence_GetItem(dq, i);
    if (x == NULL) {
        PyErr_Clear();
        return 0;
    }
    int ok = PyTuple_CheckExact(x) && PyTuple_GET_SIZE(x) == 3 && is_float(PyTuple_GET_ITEM(x, 0), &v[0])
        && is_float(PyTuple_GET_ITEM(x, 1), &v[1]) && is_float(PyTuple_GET_ITEM(x, 2), &v[2]);
    Py_DECREF(x);
    return ok;
}

/* How MotionDetector.update's window loops will go, read before anything changes: the items the
 * append drops (a full deque) and the pops skip, the first item left (else the new one, p) and
 * whether one old item stays (last, the one before p). 1, or 0 for a window of odd shape. */
typedef struct {
    Py_ssize_t pops;
    double first[3], last[3];
    int kept;
} Scan;

static int scan(PyObject *dq, double lim, const double p[3], Scan *s)
{
    Py_ssize_t len = PyObject_Size(dq), maxlen = -1, i;
    PyObject *m = attr(dq, md_name[N_MAXLEN]);
    if (len < 0 || m == NULL || (m != Py_None && (!PyLong_CheckExact(m) || (maxlen = PyLong_AsSsize_t(m)) < 1))) {
        PyErr_Clear();
        Py_XDECREF(m);
        return 0;
    }
    Py_DECREF(m);
    Py_ssize_t start = len == maxlen ? 1 : 0;
    double v[3];
    for (i = start; i < len; i++) {
        if (!item3(dq, i, v))
            return 0;
        if (!(v[0] < lim))
            break;
    }
    s->pops = i - start;
    s->kept = i < len;
    memcpy(s->first, s->kept ? v : p, sizeof v);
    return !s->kept || item3(dq, len - 1, s->last);
}


int ep_motion_update(PyObject *md, PyObject *t_o, PyObject *e_o, PyObject *n_o, PyObject *speed)
{
    PyObject *r[M_COUNT] = {NULL};
    double t = PyFloat_AS_DOUBLE(t_o), e = PyFloat_AS_DOUBLE(e_o), n = PyFloat_AS_DOUBLE(n_o);
    double w, hw, need, slow_mps, fast_mps, hold, still = 0.0, static_s, moving_s, sp = 0.0, mx = 0.0, pt = 0.0;
    long long fixed, mep, moves, run, fast;
    int res = -1, ok = Py_TYPE(md) == md_type, has_speed = speed != Py_None;
    for (int k = 0; ok && k < M_COUNT; k++)
        ok = (r[k] = sget(md, ps_md[k])) != NULL;
    PyObject *prev = r[M_PREV];
    ok = ok && Py_TYPE(r[M_FULL]) == (PyTypeObject *)md_deque && Py_TYPE(r[M_HALF]) == (PyTypeObject *)md_deque
        && num_of(r[M_W], &w) && num_of(r[M_HW], &hw) && num_of(r[M_NEED], &need) && num_of(r[M_SLOW], &slow_mps)
        && num_of(r[M_FASTM], &fast_mps) && num_of(r[M_HOLD], &hold) && !(w < 0.0) && !(hw < 0.0)
        && PyBool_Check(r[M_MOVING]) && (r[M_STILL] == Py_None || is_float(r[M_STILL], &still))
        && counter(r[M_FIXED], &fixed) && counter(r[M_MEP], &mep) && counter(r[M_MOVES], &moves)
        && counter(r[M_RUN], &run) && counter(r[M_FAST], &fast) && is_float(r[M_STATIC], &static_s)
        && is_float(r[M_MOVS], &moving_s) && (r[M_MAX] == Py_None || is_float(r[M_MAX], &mx))
        && (!has_speed || is_float(speed, &sp))
        && (prev == Py_None || (PyTuple_CheckExact(prev) && PyTuple_GET_SIZE(prev) == 2
                                && is_float(PyTuple_GET_ITEM(prev, 0), &pt) && PyBool_Check(PyTuple_GET_ITEM(prev, 1))));
    const double p3[3] = {t, e, n};
    Scan sf, sh;
    ok = ok && scan(r[M_FULL], t - w, p3, &sf) && scan(r[M_HALF], t - hw, p3, &sh);
    if (!ok) { /* a detector of another shape: the reference itself */
        PyObject *a[4] = {t_o, e_o, n_o, speed};
        res = PyErr_Occurred() ? -1 : call_truth(md, md_name[N_UPDATE], a, 4);
        goto done;
    }
    PyObject *p = PyTuple_Pack(3, t_o, e_o, n_o); /* one tuple in both windows */
    if (p == NULL)
        goto done;
    int bad = call_truth(r[M_FULL], md_name[N_APPEND], &p, 1) < 0 || call_truth(r[M_HALF], md_name[N_APPEND], &p, 1) < 0;
    Py_DECREF(p);
    for (Py_ssize_t k = 0; !bad && k < sf.pops; k++)
        bad = call_void(r[M_FULL], md_name[N_POPLEFT]) < 0;
    for (Py_ssize_t k = 0; !bad && k < sh.pops; k++)
        bad = call_void(r[M_HALF], md_name[N_POPLEFT]) < 0;
    if (bad)
        goto done;
    double t0 = sf.first[0], e0 = sf.first[1], n0 = sf.first[2], tm = sh.first[0], em = sh.first[1],
           nm = sh.first[2], d;
    int slow = has_speed && sp <= slow_mps, recent = 0, raw = 0, moving = r[M_MOVING] == Py_True;
    if (!slow && t > tm) {
        if (hypot_py(md_hypot, e - em, n - nm, &d) < 0)
            goto done;
        recent = d > need;
    }
    if (recent && tm > t0) {
        if (hypot_py(md_hypot, em - e0, nm - n0, &d) < 0)
            goto done;
        raw = d > need;
    }
    PyObject *max_o = r[M_MAX], *still_o = r[M_STILL];
    if (has_speed) {
        if (max_o == Py_None || sp > mx)
            max_o = speed;
        if (sp >= fast_mps) {
            fast += 1;
            if (sf.kept && t > sf.last[0]) { /* the position step agrees with the speed */
                if (hypot_py(md_hypot, e - sf.last[1], n - sf.last[2], &d) < 0)
                    goto done;
                if (d >= 0.5 * sp * (t - sf.last[0]) && fast < 2)
                    fast = 2;
            }
            if (fast >= 2 && !moving) {
                run = md_confirm - 1;
                raw = 1;
            }
        } else
            fast = 0;
    } else
        fast = 0;
    int now = moving;
    if (raw) {
        run += 1;
        still_o = Py_None;
        if (run >= md_confirm && !moving)
            moves += 1, now = 1;
    } else {
        run = 0;
        if (moving) {
            if (still_o == Py_None)
                still_o = t_o;
            else if (t - still >= hold)
                now = 0;
        }
    }
    if (prev != Py_None && t > pt) {
        if (PyTuple_GET_ITEM(prev, 1) == Py_True)
            moving_s += t - pt;
        else
            static_s += t - pt;
    }
    PyObject *b = now ? Py_True : Py_False;
    if (sset(md, ps_md[M_MOVING], Py_NewRef(b)) < 0 || sset(md, ps_md[M_MAX], Py_NewRef(max_o)) < 0
        || sset(md, ps_md[M_FAST], PyLong_FromLongLong(fast)) < 0 || sset(md, ps_md[M_RUN], PyLong_FromLongLong(run)) < 0
        || sset(md, ps_md[M_STILL], Py_NewRef(still_o)) < 0 || sset(md, ps_md[M_MOVES], PyLong_FromLongLong(moves)) < 0
        || sset(md, ps_md[M_FIXED], PyLong_FromLongLong(fixed + 1)) < 0
        || sset(md, ps_md[M_MEP], PyLong_FromLongLong(mep + now)) < 0
        || sset(md, ps_md[M_MOVS], PyFloat_FromDouble(moving_s)) < 0
        || sset(md, ps_md[M_STATIC], PyFloat_FromDouble(static_s)) < 0
        || sset(md, ps_md[M_PREV], PyTuple_Pack(2, t_o, b)) < 0)
        goto done;
    res = now || (recent && has_speed);
done:
    for (int k = 0; k < M_COUNT; k++)
        Py_XDECREF(r[k]);
    return res;
}

