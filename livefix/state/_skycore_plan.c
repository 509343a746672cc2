/* livefix.state._skycore: the satellite rows (sky.Sky._plan) and obs() / seen().
 *
 * The rows are merged in a dict and sorted by list.sort with a key, exactly as the reference does,
 * so equal keys keep its stable order and odd values (None, NaN, unhashable numbers) compare,
 * merge and raise as they do in Python. The order is kept while the satellite keys repeat (the
 * reference's _order); the merge and sort run only when a set's list or `used` changed.
 */
#include "_skycore.h"

/* Python's `out[0], ..., out[n-1] = v`: new references, or -1 with the error Python raises */
static int unpack(PyObject *v, Py_ssize_t n, PyObject **out)
{
    if ((PyTuple_CheckExact(v) && PyTuple_GET_SIZE(v) == n) || (PyList_CheckExact(v) && PyList_GET_SIZE(v) == n)) {
        for (Py_ssize_t i = 0; i < n; i++) out[i] = Py_NewRef(PySequence_Fast_GET_ITEM(v, i));
        return 0;
    }
    PyObject *it = PyObject_GetIter(v), *w;
    if (it == NULL) {
        if (PyErr_ExceptionMatches(PyExc_TypeError) && Py_TYPE(v)->tp_iter == NULL && !PySequence_Check(v)) {
            PyErr_Clear();
            PyErr_Format(PyExc_TypeError, "cannot unpack non-iterable %.200s object", Py_TYPE(v)->tp_name);
        }
        return -1;
    }
    Py_ssize_t i = 0;
    for (; i < n; i++) {
        if ((out[i] = PyIter_Next(it)) == NULL) break;
    }
    if (i == n && (w = PyIter_Next(it)) != NULL) {
        Py_DECREF(w);
        PyErr_Format(PyExc_ValueError, "too many values to unpack (expected %zd)", n);
    } else if (i < n && !PyErr_Occurred()) {
        PyErr_Format(PyExc_ValueError, "not enough values to unpack (expected %zd, got %zd)", n, i);
    }
    Py_DECREF(it);
    if (!PyErr_Occurred()) return 0;
    while (i > 0) Py_DECREF(out[--i]);
    return -1;
}

/* merged[(system, prn, signal)] = ((system, prn, signal, elev, azim, cn0, (system, prn) in used, 0.0), gi),
 * the pair kept as one 9-tuple: the row, then its group's index */
static int merge_one(Sky *s, PyObject *merged, PyObject *sat, PyObject *signal, PyObject *gi, PyObject *used)
{
    PyObject *f[5];
    if (unpack(sat, 5, f) < 0) return -1;
    PyObject *pair = PyTuple_Pack(2, f[0], f[1]), *row = NULL, *key = NULL;
    int in = pair == NULL ? -1 : PySequence_Contains(used, pair);
    if (in >= 0) row = PyTuple_Pack(9, f[0], f[1], signal, f[2], f[3], f[4], in ? Py_True : Py_False, s->zero, gi);
    if (row != NULL) key = PyTuple_Pack(3, f[0], f[1], signal);
    int r = key == NULL || PyDict_SetItem(merged, key, row) < 0 ? -1 : 0;
    Py_XDECREF(key);
    Py_XDECREF(row);
    Py_XDECREF(pair);
    for (int i = 0; i < 5; i++) Py_DECREF(f[i]);
    return r;
}

/* every group's satellites into merged, in group order */
static int merge(Sky *s, PyObject *merged, PyObject *used)
{
    Py_ssize_t pos = 0, gi = 0;
    PyObject *group, *sats;
    while (PyDict_Next(s->groups, &pos, &group, &sats)) {
        PyObject *g[2], *it, *sat;
        if (unpack(group, 2, g) < 0) return -1;  /* (_, signal) */
        Py_DECREF(g[0]);
        PyObject *idx = PyLong_FromSsize_t(gi++);
        it = idx == NULL ? NULL : PyObject_GetIter(sats);
        int r = it == NULL ? -1 : 0;
        while (r == 0 && (sat = PyIter_Next(it)) != NULL) {
            r = merge_one(s, merged, sat, g[1], idx, used);
            Py_DECREF(sat);
        }
        if (r == 0 && PyErr_Occurred()) r = -1;
        Py_XDECREF(it);
        Py_XDECREF(idx);
        Py_DECREF(g[1]);
        if (r < 0) return -1;
    }
    return 0;
}

/* the order of keys: sorted(range(n), key=lambda i: (rank.get(keys[i][0], 9), keys[i][1], keys[i][2])) */
static PyObject *sort_order(Sky *s, PyObject *keys)
{
    Py_ssize_t n = PyTuple_GET_SIZE(keys);
    PyObject *klist = PyList_New(n), *idx = PyList_New(n), *nine = PyLong_FromLong(9);
    PyObject *getitem = NULL, *sort = NULL, *kw = NULL, *done = NULL, *noargs = NULL;
    int bad = klist == NULL || idx == NULL || nine == NULL;
    for (Py_ssize_t i = 0; !bad && i < n; i++) {
        PyObject *k = PyTuple_GET_ITEM(keys, i);  /* our own (system, prn, signal) */
        PyObject *rank = PyDict_GetItemWithError(s->rank, PyTuple_GET_ITEM(k, 0));
        PyObject *key = rank == NULL && PyErr_Occurred() ? NULL
                        : PyTuple_Pack(3, rank != NULL ? rank : nine, PyTuple_GET_ITEM(k, 1), PyTuple_GET_ITEM(k, 2));
        PyObject *at = key == NULL ? NULL : PyLong_FromSsize_t(i);
        if (at == NULL) {
            Py_XDECREF(key);
            bad = 1;
            break;
        }
        PyList_SET_ITEM(klist, i, key);
        PyList_SET_ITEM(idx, i, at);
    }
    if (!bad) {
        getitem = PyObject_GetAttrString(klist, "__getitem__");
        sort = getitem == NULL ? NULL : PyObject_GetAttrString(idx, "sort");
        kw = sort == NULL ? NULL : Py_BuildValue("{sO}", "key", getitem);
        noargs = kw == NULL ? NULL : PyTuple_New(0);
        done = noargs == NULL ? NULL : PyObject_Call(sort, noargs, kw);  /* stable, as sorted() */
        bad = done == NULL;
    }
    Py_XDECREF(done);
    Py_XDECREF(noargs);
    Py_XDECREF(kw);
    Py_XDECREF(sort);
    Py_XDECREF(getitem);
    Py_XDECREF(nine);
    Py_XDECREF(klist);
    if (bad) Py_CLEAR(idx);
    return idx;
}

/* sky._plan(used): a tuple of rows + group index (9-tuples) in sorted order; keeps the order cache */
static PyObject *plan(Sky *s, PyObject *used)
{
    PyObject *merged = PyDict_New(), *keys = NULL, *list = NULL, *vals = NULL, *out = NULL;
    if (merged == NULL) return NULL;
    if (merge(s, merged, used) < 0 || (list = PyDict_Keys(merged)) == NULL || (keys = PyList_AsTuple(list)) == NULL)
        goto done;
    int ne = sky_cmp(keys, s->order_keys, Py_NE);  /* the same satellites as last time: the same order */
    if (ne < 0) goto done;
    if (ne) {
        PyObject *idx = sort_order(s, keys);
        if (idx == NULL) goto done;
        Py_SETREF(s->order_keys, Py_NewRef(keys));
        Py_SETREF(s->order_idx, idx);
    }
    if ((vals = PyDict_Values(merged)) == NULL) goto done;
    Py_ssize_t n = PyList_GET_SIZE(s->order_idx);
    if ((out = PyTuple_New(n)) == NULL) goto done;
    for (Py_ssize_t i = 0; i < n; i++) {
        Py_ssize_t k = PyLong_AsSsize_t(PyList_GET_ITEM(s->order_idx, i));
        if (k < 0 || k >= PyList_GET_SIZE(vals)) {
            if (!PyErr_Occurred()) PyErr_SetString(PyExc_IndexError, "list index out of range");
            Py_CLEAR(out);
            break;
        }
        PyTuple_SET_ITEM(out, i, Py_NewRef(PyList_GET_ITEM(vals, k)));
    }
done:
    Py_XDECREF(vals);
    Py_XDECREF(keys);
    Py_XDECREF(list);
    Py_DECREF(merged);
    return out;
}

/* tuple(make_satobs(row) for row, _ in plan), or with last_seen_mono monos[gi] when monos is given */
static PyObject *make_all(Sky *s, PyObject *rows, PyObject *monos)
{
    Py_ssize_t n = PyTuple_GET_SIZE(rows);
    PyObject *out = PyTuple_New(n), *v[8];
    for (Py_ssize_t i = 0; out != NULL && i < n; i++) {
        PyObject *row = PyTuple_GET_ITEM(rows, i);
        for (int f = 0; f < 8; f++) v[f] = PyTuple_GET_ITEM(row, f);
        if (monos != NULL) {  /* row[:7] + (monos[gi],) */
            Py_ssize_t gi = PyLong_AsSsize_t(PyTuple_GET_ITEM(row, 8));
            if (gi < 0 || gi >= PyTuple_GET_SIZE(monos)) {
                if (!PyErr_Occurred()) PyErr_SetString(PyExc_IndexError, "tuple index out of range");
                Py_CLEAR(out);
                break;
            }
            v[7] = PyTuple_GET_ITEM(monos, gi);
        }
        PyObject *o = sky_satobs(s, v);
        if (o == NULL) Py_CLEAR(out);
        else PyTuple_SET_ITEM(out, i, o);
    }
    return out;
}

/* a new layout (sig, used, plan(used)) */
static PyObject *new_layout(Sky *s, PyObject *sig, PyObject *used)
{
    PyObject *p = plan(s, used);
    if (p == NULL) return NULL;
    PyObject *lay = PyTuple_Pack(3, sig, used, p);
    Py_DECREF(p);
    return lay;
}

PyObject *sky_obs(Sky *s, PyObject *used)
{
    PyObject *sig = sky_signature(s);
    if (sig == NULL) return NULL;
    int hit = s->lay == NULL ? 0 : sky_sig_same(s->lay_sig, sig);
    if (hit < 0) return NULL;
    if (hit) Py_SETREF(s->lay_sig, Py_NewRef(sig));  /* equal: the current one, cheaper next time */
    PyObject *had = hit ? PyTuple_GET_ITEM(s->lay, 1) : NULL;
    if (hit && had != used) {
        int ne = sky_cmp(had, used, Py_NE);
        if (ne < 0) return NULL;
        hit = !ne;
    }
    if (!hit) {
        PyObject *lay = new_layout(s, sig, used);
        if (lay == NULL) return NULL;
        Py_XSETREF(s->lay, lay);  /* as the reference: the layout first, then its tuple */
        Py_XSETREF(s->lay_sig, Py_NewRef(sig));
        PyObject *lean = make_all(s, PyTuple_GET_ITEM(lay, 2), NULL);
        if (lean == NULL) return NULL;
        Py_SETREF(s->lean, lean);
    }
    return Py_NewRef(s->lean);
}

/* seen()'s layout: obs()'s when it fits, else seen()'s own when it fits, else a new one */
static PyObject *seen_layout(Sky *s, PyObject *sig, PyObject *used)
{
    int fits = s->lay == NULL ? 0 : sky_sig_same(s->lay_sig, sig);
    if (fits > 0) fits = sky_cmp(PyTuple_GET_ITEM(s->lay, 1), used, Py_NE) == 0 ? 1 : PyErr_Occurred() ? -1 : 0;
    if (fits < 0) return NULL;
    if (fits) return Py_NewRef(s->lay);
    PyObject *own = s->seen_lay;
    fits = own == NULL ? 0 : sky_sig_same(PyTuple_GET_ITEM(own, 0), sig);
    if (fits > 0) fits = sky_cmp(PyTuple_GET_ITEM(own, 1), used, Py_EQ);
    if (fits < 0) return NULL;
    return fits ? Py_NewRef(own) : new_layout(s, sig, used);
}

PyObject *sky_seen(Sky *s, PyObject *used)
{
    PyObject *sig = sky_signature(s), *vals = NULL, *monos = NULL, *out = NULL;
    if (sig == NULL) return NULL;
    Py_INCREF(sig);
    PyObject *lay = seen_layout(s, sig, used);
    Py_DECREF(sig);
    if (lay == NULL) return NULL;
    if ((vals = PyDict_Values(s->monos)) == NULL || (monos = PyList_AsTuple(vals)) == NULL) goto done;
    int again = s->seen_lay == NULL || s->seen_lay != lay;
    if (!again && (again = sky_cmp(s->seen_monos, monos, Py_NE)) < 0) goto done;
    if (again) {
        PyObject *made = make_all(s, PyTuple_GET_ITEM(lay, 2), monos);
        if (made == NULL) goto done;
        Py_XSETREF(s->seen_out, made);
        Py_XSETREF(s->seen_monos, Py_NewRef(monos));
        Py_XSETREF(s->seen_lay, Py_NewRef(lay));
    }
    out = Py_NewRef(s->seen_out);
done:
    Py_XDECREF(monos);
    Py_XDECREF(vals);
    Py_DECREF(lay);
    return out;
}
