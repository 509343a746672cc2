/* livefix.analysis._epochcore: the bucket sums of livefix/analysis/trend.py (Trend.add_values) as
 * trend_add(); the module and its state are in _epochcore.c.
 */
#include "_epochcore.h"

/* ---- Trend.add_values ---- */

/* Python's float floor division t // w (Objects/floatobject.c: fmod, then the quotient rounded). */
static double floor_div(double vx, double wx)
{
    double mod = fmod(vx, wx), div = (vx - mod) / wx, fd;
    if (mod != 0.0 && (wx < 0) != (mod < 0))
        div -= 1.0;
    if (div != 0.0) {
        fd = floor(div);
        if (div - fd > 0.5)
            fd += 1.0;
    }
    else
        fd = copysign(0.0, vx / wx);
    return fd;
}

/* a - b as Python gives it and float + that adds it (both checked by num_of): an int when both are
 * ints (exact in a long long, rounded once on the addition), else a float difference. */
static double diff(PyObject *a, PyObject *b)
{
    double x = 0.0, y = 0.0;
    if (PyLong_CheckExact(a) && PyLong_CheckExact(b))
        return (double)(PyLong_AsLongLong(a) - PyLong_AsLongLong(b));
    num_of(a, &x);
    num_of(b, &y);
    return x - y;
}

PyObject *ep_trend_add(PyObject *Py_UNUSED(mod), PyObject *const *a, Py_ssize_t nargs)
{
    if (!ep_ready(ep_bucket_len != 0))
        return NULL;
    if (nargs != 9) {
        PyErr_SetString(PyExc_TypeError, "trend_add takes 9 arguments");
        return NULL;
    }
    PyObject *self = a[0], *mono = a[1], *lat = a[6], *lon = a[7], *h = a[8];
    PyObject *t0 = NULL, *width = NULL, *maxp = NULL, *bs = NULL, *origin = NULL, *b = NULL, *res = Py_False;
    double v[3], t, la, lo, hd = 0.0, o[3];
    int has[3], pos = 0, has_h = 0;
    long long mp;
    if (!PyFloat_CheckExact(mono) || (t0 = attr(self, ep_s_t0)) == NULL || (width = attr(self, ep_s_width)) == NULL
        || (maxp = attr(self, ep_s_max_points)) == NULL || (bs = attr(self, ep_s_buckets)) == NULL)
        goto done;
    double md = PyFloat_AS_DOUBLE(mono);
    if (t0 == Py_None)
        t = md - md;
    else if (PyFloat_CheckExact(t0))
        t = md - PyFloat_AS_DOUBLE(t0);
    else
        goto done;
    if (!isfinite(t) || !PyFloat_CheckExact(width) || !count_of(maxp, &mp) || mp < 1 || mp > (1LL << 40)
        || !PyList_CheckExact(bs))
        goto done;
    if (t < 0)
        t = 0.0; /* host clock stepped back */
    double wd = PyFloat_AS_DOUBLE(width);
    if (!(isfinite(wd) && wd > 0.0))
        goto done;
    double fd = floor_div(t, wd);
    if (!isfinite(fd) || fd >= (double)mp)
        goto done; /* a merge first: the Python code */
    Py_ssize_t idx = (Py_ssize_t)fd, n = PyList_GET_SIZE(bs);
    if (idx < n && (b = PyList_GET_ITEM(bs, idx)) != Py_None) {
        if (!PyList_CheckExact(b) || PyList_GET_SIZE(b) != ep_bucket_len)
            goto done;
        for (Py_ssize_t k = 0; k < ep_bucket_len; k++)
            if (!PyFloat_CheckExact(PyList_GET_ITEM(b, k)))
                goto done;
    }
    else
        b = NULL;
    for (int k = 0; k < 3; k++) {
        has[k] = 0;
        if (a[3 + k] != Py_None) {
            if (!num_of(a[3 + k], &v[k]))
                goto done;
            has[k] = isfinite(v[k]);
        }
    }
    /* `lat is not None and lon is not None and isfinite(lat) and isfinite(lon)`, in that order */
    if (lat != Py_None && lon != Py_None) {
        if (!num_of(lat, &la))
            goto done;
        if (isfinite(la)) {
            if (!num_of(lon, &lo))
                goto done;
            pos = isfinite(lo);
        }
    }
    if (pos) {
        if (h != Py_None) {
            if (!num_of(h, &hd))
                goto done;
            has_h = isfinite(hd);
        }
        if ((origin = attr(self, ep_s_origin)) == NULL)
            goto done;
        if (origin != Py_None) {
            if (!PyTuple_CheckExact(origin) || PyTuple_GET_SIZE(origin) != 3)
                goto done;
            for (int k = 0; k < 3; k++)
                if (!num_of(PyTuple_GET_ITEM(origin, k), &o[k]))
                    goto done;
        }
    }
    /* -- changes, as the Python code makes them -- */
    res = NULL;
    if (t0 == Py_None && (PyObject_SetAttr(self, ep_s_t0, mono) < 0 || PyObject_SetAttr(self, ep_s_t0_iso, a[2]) < 0))
        goto done;
    if (b == NULL) {
        PyObject *zero = PyFloat_FromDouble(0.0);
        b = zero == NULL ? NULL : PyList_New(ep_bucket_len);
        if (b == NULL) {
            Py_XDECREF(zero);
            goto done;
        }
        for (Py_ssize_t k = 0; k < ep_bucket_len; k++)
            PyList_SET_ITEM(b, k, Py_NewRef(zero)); /* `[0.0] * n`: one float object */
        Py_DECREF(zero);
        int r = 0;
        if (idx < n)
            r = PyList_SetItem(bs, idx, Py_NewRef(b));
        else {
            for (Py_ssize_t k = n; r == 0 && k < idx; k++)
                r = PyList_Append(bs, Py_None);
            if (r == 0)
                r = PyList_Append(bs, b);
        }
        Py_DECREF(b); /* held by the list */
        if (r < 0)
            goto done;
    }
    if (add_float(b, 0, 1.0) < 0 || add_float(b, 1, t) < 0)
        goto done;
    for (int k = 0; k < 3; k++)
        if (has[k] && (add_float(b, 2 + 2 * k, v[k]) < 0 || add_float(b, 3 + 2 * k, 1.0) < 0))
            goto done;
    if (pos) {
        if (origin == Py_None) {
            PyObject *oh = has_h ? Py_NewRef(h) : PyFloat_FromDouble(0.0);
            Py_SETREF(origin, oh == NULL ? NULL : PyTuple_Pack(3, lat, lon, oh));
            Py_XDECREF(oh);
            if (origin == NULL || PyObject_SetAttr(self, ep_s_origin, origin) < 0)
                goto done;
        }
        if (add_float(b, 8, diff(lat, PyTuple_GET_ITEM(origin, 0))) < 0 || add_float(b, 9, 1.0) < 0
            || add_float(b, 10, diff(lon, PyTuple_GET_ITEM(origin, 1))) < 0 || add_float(b, 11, 1.0) < 0)
            goto done;
        if (has_h && (add_float(b, 12, diff(h, PyTuple_GET_ITEM(origin, 2))) < 0 || add_float(b, 13, 1.0) < 0))
            goto done;
    }
    res = Py_True;
done:
    Py_XDECREF(t0);
    Py_XDECREF(width);
    Py_XDECREF(maxp);
    Py_XDECREF(bs);
    Py_XDECREF(origin);
    return Py_XNewRef(res);
}
