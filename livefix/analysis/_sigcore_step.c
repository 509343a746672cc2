/* livefix.analysis._sigcore: step(), SignalStats.on_epoch and SignalStats._accumulate in C.
 *
 * Why: the satellite loops were already in C, but on_epoch's own work (every epoch), the "sky
 * changed" block (the list of tracked signals, their sum, mean and top-4 mean) and the glue of the
 * once-per-second sample still cost a few microseconds per epoch in Python.
 *
 * The Python methods stay the reference. step() reads and stores the same attributes with the same
 * values, in the same order: the stores of the "sky changed" block, then, on a sampling epoch,
 * _if_t, then _accumulate, then _interference. A part it does not take runs as the Python method
 * itself (_accumulate, _accumulate_sats for the satellites the C loop left, _interference), at the
 * point where the reference calls it, on the same state. Only before the first store can it hand
 * the whole epoch back (False): an epoch or satellite of another type, a C/N0 of a type other than
 * exact float or exact int within 2**53 (or more than SKY_MAX signals), an _if_t that is no float.
 *
 * sum() and sorted(): sum() of the tracked C/N0 values adds left to right from the int 0, ints as
 * ints until the first float (CPython <= 3.11; 3.12 adds floats compensated, so there an epoch
 * whose values include a float is handed back); sorted(reverse=True) keeps equal values in list
 * order, so the top four are picked stably.
 */
#include "_sigcore.h"

#define SKY_MAX 512        /* signals per epoch taken here: 512 * 2**53 fits a long long */
#define TOP_N 4

/* sum() of a run of ints and floats from the int 0, as CPython 3.11 adds them */
typedef struct {
    int is_int;
    long long i;
    double f;
} PySum;

static void sum_add(PySum *s, int is_int, long long i, double f)
{
    if (is_int) {
        if (s->is_int)
            s->i += i;
        else
            s->f += (double)i;
    }
    else if (s->is_int) { /* int + float: the int converted (exactly rounded) */
        s->f = (double)s->i + f;
        s->is_int = 0;
    }
    else
        s->f += f;
}

/* The sum as a Python number; NULL with no error set when an int sum would not divide exactly. */
static PyObject *sum_value(const PySum *s)
{
    if (s->is_int)
        return s->i <= EXACT_INT_MAX && s->i >= -EXACT_INT_MAX ? PyLong_FromLongLong(s->i) : NULL;
    return PyFloat_FromDouble(s->f);
}

/* sum / n as Python's true division of that sum by an int (s exact, see sum_value) */
static PyObject *sum_mean(const PySum *s, Py_ssize_t n)
{
    return PyFloat_FromDouble((s->is_int ? (double)s->i : s->f) / (double)n);
}

typedef struct {
    int is_int;
    long long i;
    double v;
} Val;

/* The "sky changed" block: the new cur list and _cur_sum, cur_mean, cur_top4 (new references in
 * out[0..3]): 1, or 0 (hand back, nothing made), or -1 error. */
static int current(PyObject *sats, PyObject **out)
{
    Py_ssize_t n = PyTuple_GET_SIZE(sats), k = 0, nt = 0;
    if (n > SKY_MAX)
        return 0;
    Val top[TOP_N];
    PySum all = {1, 0, 0.0}, four = {1, 0, 0.0};
    int has_float = 0;
    for (Py_ssize_t i = 0; i < n; i++) {
        PyObject *v[F_COUNT], *s = PyTuple_GET_ITEM(sats, i);
        if (!fields_of(s, v))
            return 0;
        PyObject *c = v[F_CN0];
        Val x;
        if (c == Py_None)
            continue;
        if (!num_of(c, &x.v))
            return 0; /* bool, huge int, other types: `s.cn0 and s.cn0 > 0` is the Python code's */
        if (!(x.v > 0)) /* 0, -0.0, negative and nan are not tracked */
            continue;
        x.is_int = !PyFloat_CheckExact(c);
        x.i = x.is_int ? (long long)x.v : 0;
        has_float |= !x.is_int;
        sum_add(&all, x.is_int, x.i, x.v);
        Py_ssize_t pos = nt; /* after every value >= x: sorted(reverse=True) is stable */
        while (pos > 0 && top[pos - 1].v < x.v)
            pos--;
        if (pos < TOP_N) {
            for (Py_ssize_t j = (nt < TOP_N ? nt : TOP_N - 1); j > pos; j--)
                top[j] = top[j - 1];
            top[pos] = x;
            if (nt < TOP_N)
                nt++;
        }
        k++;
    }
#if PY_VERSION_HEX >= 0x030C0000
    if (has_float)
        return 0; /* sum() of floats is compensated from 3.12 on: the Python code's */
#else
    (void)has_float;
#endif
    for (Py_ssize_t j = 0; j < nt; j++)
        sum_add(&four, top[j].is_int, top[j].i, top[j].v);
    if (k > 0 && ((all.is_int && (all.i > EXACT_INT_MAX)) || (four.is_int && four.i > EXACT_INT_MAX)))
        return 0; /* an int sum past 2**53: Python divides it exactly, a double would not */
    PyObject *cur = PyList_New(k);
    if (cur == NULL)
        return -1;
    for (Py_ssize_t i = 0, j = 0; i < n; i++) {
        PyObject *s = PyTuple_GET_ITEM(sats, i), *c = slot(s, F_CN0);
        double d;
        if (c != Py_None && num_of(c, &d) && d > 0)
            PyList_SET_ITEM(cur, j++, Py_NewRef(s));
    }
    out[0] = cur;
    out[1] = sum_value(&all);
    out[2] = k > 0 ? sum_mean(&all, k) : Py_NewRef(Py_None);
    out[3] = k > 0 ? sum_mean(&four, nt) : Py_NewRef(Py_None);
    if (out[1] == NULL || out[2] == NULL || out[3] == NULL) {
        for (int j = 0; j < 4; j++)
            Py_CLEAR(out[j]);
        if (!PyErr_Occurred())
            PyErr_NoMemory();
        return -1;
    }
    return 1;
}

/* self.<name> += x (x borrowed): the generic in-place add of the statement */
static int iadd_attr(PyObject *self, int name, PyObject *x)
{
    PyObject *v = PyObject_GetAttr(self, sig_name[name]);
    if (v == NULL)
        return -1;
    PyObject *r = PyNumber_InPlaceAdd(v, x);
    Py_DECREF(v);
    int e = r == NULL ? -1 : PyObject_SetAttr(self, sig_name[name], r);
    Py_XDECREF(r);
    return e;
}

/* SignalStats._accumulate: 1 done, 0 not taken here (nothing changed: the caller runs the method),
 * -1 error. The containers of another type are the Python method's (core.accumulate refuses them). */
static int accumulate(PyObject *self)
{
    PyObject *o[6] = {attr(self, N_CUR), attr(self, N_CS), attr(self, N_BY_SYS), attr(self, N_BANDS),
                      attr(self, N_CELLS), attr(self, N_CONFIG)};
    PyObject *mask = o[5] == NULL ? NULL : attr(o[5], N_MASK), *cur = o[0];
    double maskd;
    int r = 0;
    if (cur == NULL || o[1] == NULL || o[2] == NULL || o[3] == NULL || o[4] == NULL || mask == NULL
        || !PyList_CheckExact(cur) || !PyList_CheckExact(o[1]) || !PyDict_CheckExact(o[2])
        || !PyList_CheckExact(o[3]) || !PyDict_CheckExact(o[4]) || !num_of(mask, &maskd))
        goto done;
    r = -1;
    Py_ssize_t k = sig_accumulate_run(cur, o[1], o[2], o[3], o[4], maskd);
    if (k < 0)
        goto done;
    if (k < PyList_GET_SIZE(cur)) { /* the satellites left: the Python loop, as the reference does */
        PyObject *rest = k == 0 ? Py_NewRef(cur) : PyList_GetSlice(cur, k, PyList_GET_SIZE(cur));
        PyObject *x = rest == NULL ? NULL : PyObject_CallMethodOneArg(self, sig_name[N_ACCUMULATE_SATS], rest);
        Py_XDECREF(rest);
        if (x == NULL)
            goto done;
        Py_DECREF(x);
    }
    if (PyList_GET_SIZE(cur) > 0) {
        PyObject *len = PyLong_FromSsize_t(PyList_GET_SIZE(cur)), *cs = NULL, *t4 = NULL;
        int e = len == NULL || iadd_attr(self, N_N, len) < 0;
        Py_XDECREF(len);
        if (e || (cs = PyObject_GetAttr(self, sig_name[N_CUR_SUM])) == NULL)
            goto done;
        e = iadd_attr(self, N_SUM, cs) < 0 || (t4 = PyObject_GetAttr(self, sig_name[N_CUR_TOP4])) == NULL;
        Py_DECREF(cs);
        if (e)
            goto done;
        int truth = PyObject_IsTrue(t4); /* `self.cur_top4 or 0.0` */
        PyObject *add = truth < 0 ? NULL : truth ? Py_NewRef(t4) : PyFloat_FromDouble(0.0);
        Py_DECREF(t4);
        e = add == NULL || iadd_attr(self, N_TOP4_SUM, add) < 0;
        Py_XDECREF(add);
        PyObject *one = e ? NULL : PyLong_FromLong(1);
        e = one == NULL || iadd_attr(self, N_TOP4_N, one) < 0;
        Py_XDECREF(one);
        if (e)
            goto done;
    }
    r = 1;
done:
    for (int j = 0; j < 6; j++)
        Py_XDECREF(o[j]);
    Py_XDECREF(mask);
    return r;
}

/* self.name() or self.name(arg): the Python method for a part not taken here; 0 or -1 */
static int run_method(PyObject *self, int name, PyObject *arg)
{
    PyObject *r = arg == NULL ? PyObject_CallMethodNoArgs(self, sig_name[name])
                              : PyObject_CallMethodOneArg(self, sig_name[name], arg);
    Py_XDECREF(r);
    return r == NULL ? -1 : 0;
}

static const int CUR_NAMES[4] = {N_CUR, N_CUR_SUM, N_CUR_MEAN, N_CUR_TOP4};

PyObject *sig_step(PyObject *Py_UNUSED(mod), PyObject *const *a, Py_ssize_t nargs)
{
    if (!sig_need_config())
        return NULL;
    if (nargs != 2) {
        PyErr_SetString(PyExc_TypeError, "step takes 2 arguments (stats, ep)");
        return NULL;
    }
    PyObject *self = a[0], *ep = a[1];
    if (Py_TYPE(ep) != sig_epoch_type)
        Py_RETURN_FALSE;
    PyObject *sats = eslot(ep, E_SATS), *mono = eslot(ep, E_MONO);
    if (sats == NULL || mono == NULL || !PyTuple_CheckExact(sats) || !PyFloat_CheckExact(mono))
        Py_RETURN_FALSE;
    PyObject *last = attr(self, N_LAST_SATS), *if_t = attr(self, N_IF_T), *cur[4] = {NULL, NULL, NULL, NULL};
    int r = 0, changed = last != sats;
    if (last == NULL || if_t == NULL || !PyFloat_CheckExact(if_t))
        goto done;
    double dt = PyFloat_AS_DOUBLE(mono) - PyFloat_AS_DOUBLE(if_t);
    if (changed && (r = current(sats, cur)) <= 0)
        goto done;
    /* -- from here on the epoch is done here (errors as the Python code raises them) -- */
    r = -1;
    if (changed) {
        if (PyObject_SetAttr(self, sig_name[N_LAST_SATS], sats) < 0)
            goto done;
        for (int j = 0; j < 4; j++)
            if (PyObject_SetAttr(self, sig_name[CUR_NAMES[j]], cur[j]) < 0)
                goto done;
    }
    if (dt >= sig_eval_s || dt < 0) { /* one sample per ~second of stream time */
        if (PyObject_SetAttr(self, sig_name[N_IF_T], mono) < 0)
            goto done;
        int k = accumulate(self);
        if (k < 0 || (k == 0 && run_method(self, N_ACCUMULATE, NULL) < 0))
            goto done;
        k = sig_interference(self, ep);
        if (k < 0 || (k == 0 && run_method(self, N_INTERFERENCE, ep) < 0))
            goto done;
    }
    r = 1;
done:
    Py_XDECREF(last);
    Py_XDECREF(if_t);
    for (int j = 0; j < 4; j++)
        Py_XDECREF(cur[j]);
    if (r < 0)
        return NULL;
    return Py_NewRef(r ? Py_True : Py_False);
}
