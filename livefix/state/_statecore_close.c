/* livefix.state._statecore, StateModel._close of livefix/state/model.py: one Epoch from the open
 * epoch, step for step (the same field reads, conversions, float operations and collaborator calls
 * in the same order; the used tuple and the sky's tuple handed on by identity as the reference does).
 * Per epoch, so the rare parts (a ZDA date across midnight, DTM, an odd quality source) call the
 * reference's helpers.
 */
#include "_statecore.h"

static PyObject *S_quality, *S_status, *S_posMode, *S_alt, *S_sep, *S_spd, *S_sogk, *S_sogn, *S_navMode, *S_numSV,
    *S_HDOP, *S_PDOP, *S_VDOP, *S_stdLat, *S_stdLong, *S_stdAlt, *S_rangeRms, *S_cog, *S_cogt, *S_diffAge,
    *S_used, *S_used_sorted, *S_last_epoch, *S_closed_tod, *S_epochs, *S_open, *S_unknown, *S_date_known, *S_V,
    *S_A, *NONE_MAP, *C36, *CKNOT;

int st_close_init(void)
{
#define INTERN(var, text) ((var) = PyUnicode_InternFromString(text)) == NULL
    return INTERN(S_quality, "quality") || INTERN(S_status, "status") || INTERN(S_posMode, "posMode")
        || INTERN(S_alt, "alt") || INTERN(S_sep, "sep") || INTERN(S_spd, "spd") || INTERN(S_sogk, "sogk")
        || INTERN(S_sogn, "sogn") || INTERN(S_navMode, "navMode") || INTERN(S_numSV, "numSV") || INTERN(S_HDOP, "HDOP")
        || INTERN(S_PDOP, "PDOP") || INTERN(S_VDOP, "VDOP") || INTERN(S_stdLat, "stdLat") || INTERN(S_stdLong, "stdLong")
        || INTERN(S_stdAlt, "stdAlt") || INTERN(S_rangeRms, "rangeRms") || INTERN(S_cog, "cog") || INTERN(S_cogt, "cogt")
        || INTERN(S_diffAge, "diffAge") || INTERN(S_used, "_used") || INTERN(S_used_sorted, "_used_sorted")
        || INTERN(S_last_epoch, "last_epoch") || INTERN(S_closed_tod, "_closed_tod") || INTERN(S_epochs, "epochs")
        || INTERN(S_open, "_open") || INTERN(S_unknown, "unknown") || INTERN(S_date_known, "date_known")
        || INTERN(S_V, "V") || INTERN(S_A, "A") || (NONE_MAP = PyDict_New()) == NULL
        || (C36 = PyFloat_FromDouble(3.6)) == NULL || (CKNOT = PyFloat_FromDouble(KNOT_MPS)) == NULL ? -1 : 0;
#undef INTERN
}

void st_open_clear(Core *s)
{
    s->open = 0;
    Py_CLEAR(s->o_mono);
    Py_CLEAR(s->o_wall);
    Py_CLEAR(s->o_by_type);
    Py_CLEAR(s->o_used);
    Py_CLEAR(s->o_date);
    for (int i = 0; i < MAX_GSA_SEQ; i++) Py_CLEAR(s->gsa_seq[i]);
    s->gsa_n = 0;
    for (Py_ssize_t i = 0; i < s->nkeys; i++) {
        Py_CLEAR(s->keys[i].talker);
        Py_CLEAR(s->keys[i].mid);
        Py_CLEAR(s->keys[i].key);
    }
    s->nkeys = 0;
    for (int i = 0; i < s->nsent; i++) Py_CLEAR(s->sent[i]);
    s->nsent = 0;
}

static int is_num(PyObject *v) { return PyFloat_CheckExact(v) || PyLong_CheckExact(v); }

/* model._num(v), stealing v: float(v) for an int or float, else None; NULL on error */
static PyObject *num(PyObject *v)
{
    if (v == NULL) return NULL;
    PyObject *r = is_num(v) ? PyNumber_Float(v) : Py_NewRef(Py_None);
    Py_DECREF(v);
    return r;
}

/* model._first(maps[0].get(a), maps[1].get(b), ...): all read first, then converted in turn */
static PyObject *first_of(PyObject *const *maps, PyObject *a, PyObject *b, PyObject *c, int n)
{
    PyObject *names[3] = {a, b, c}, *v[3] = {NULL, NULL, NULL}, *r = NULL;
    int i = 0;
    for (; i < n && (v[i] = st_get(maps[i], names[i])) != NULL; i++) {}
    if (i == n)
        for (i = 0; i < n && r == NULL; i++) {
            r = num(Py_NewRef(v[i]));
            if (r == Py_None) Py_CLEAR(r);
            else if (r == NULL) break;
        }
    if (r == NULL && !PyErr_Occurred()) r = Py_NewRef(Py_None);
    for (i = 0; i < n; i++) Py_XDECREF(v[i]);
    return r;
}

/* model._quality(gga, src); gga NULL: none in the epoch */
static PyObject *quality(Core *s, PyObject *gga, PyObject *src)
{
    static const char rank[] = "NSMEAPDFR";
    if (gga != NULL && gga != Py_None) {
        PyObject *q = st_get(gga, S_quality);
        if (q == NULL || PyLong_CheckExact(q)) return q;
        Py_DECREF(q);
        return PyLong_FromLong(0);
    }
    if (kit_plain_dict(src) == NULL) goto python;
    PyObject *status = st_get(src, S_status), *mode = NULL;
    if (status == NULL) return NULL;
    long out = -1;
    if (PyUnicode_CheckExact(status) && PyUnicode_Compare(status, S_V) == 0) out = 0;
    else if (!PyUnicode_CheckExact(status) && status != Py_None && !is_num(status)) goto slow;
    else if ((mode = st_get(src, S_posMode)) == NULL) out = -2;
    else if (PyUnicode_CheckExact(mode) && PyUnicode_GET_LENGTH(mode) > 0) {
        int best = -1; /* max(mode, key=MODE_RANK.get(m, -1)): the first of the highest rank */
        Py_UCS4 pick = PyUnicode_READ_CHAR(mode, 0);
        for (Py_ssize_t i = 0; i < PyUnicode_GET_LENGTH(mode); i++) {
            Py_UCS4 c = PyUnicode_READ_CHAR(mode, i);
            const char *at = c > 0 && c < 128 ? strchr(rank, (int)c) : NULL;
            int r = at != NULL ? (int)(at - rank) : -1;
            if (r > best) best = r, pick = c;
        }
        static const char q_of[] = "N0S8M7E6A1P3D2F5R4"; /* MODE_QUALITY */
        out = 0;
        for (int i = 0; i < 18; i += 2)
            if ((Py_UCS4)q_of[i] == pick) out = q_of[i + 1] - '0';
    } else if (PyUnicode_Check(mode)) {
        if (!PyUnicode_CheckExact(mode)) goto slow;
        out = PyUnicode_CheckExact(status) && PyUnicode_Compare(status, S_A) == 0; /* an empty mode */
    } else {
        out = PyUnicode_CheckExact(status) && PyUnicode_Compare(status, S_A) == 0;
    }
    Py_DECREF(status);
    Py_XDECREF(mode);
    return out == -2 ? NULL : PyLong_FromLong(out);
slow:
    Py_DECREF(status);
    Py_XDECREF(mode);
python:;
    PyObject *args[2] = {gga != NULL ? gga : Py_None, src};
    return PyObject_Vectorcall(s->call[C_QUALITY], args, 2, NULL);
}

/* the speed: RMC knots, else VTG km/h, else VTG knots; NULL on error */
static PyObject *speed_of(PyObject *rmc, PyObject *vtg)
{
    PyObject *v = num(st_get(rmc, S_spd));
    if (v == NULL || v != Py_None) {
        PyObject *r = v == NULL ? NULL : PyFloat_FromDouble(PyFloat_AS_DOUBLE(v) * KNOT_MPS);
        Py_XDECREF(v);
        return r;
    }
    Py_DECREF(v);
    PyObject *names[2] = {S_sogk, S_sogn};
    for (int i = 0; i < 2; i++) {
        PyObject *g = st_get(vtg, names[i]);
        if (g == NULL) return NULL;
        int ok = is_num(g);
        Py_DECREF(g);
        if (!ok) continue;
        PyObject *x = PyObject_GetItem(vtg, names[i]), *r;
        if (x == NULL) return NULL;
        if (PyFloat_CheckExact(x))
            r = PyFloat_FromDouble(i == 0 ? PyFloat_AS_DOUBLE(x) / 3.6 : PyFloat_AS_DOUBLE(x) * KNOT_MPS);
        else
            r = i == 0 ? PyNumber_TrueDivide(x, C36) : PyNumber_Multiply(x, CKNOT);
        Py_DECREF(x);
        return r;
    }
    return Py_NewRef(Py_None);
}

/* (lat, lon) of the first position source with both numbers: 1, 0 none, -1 error */
static int position(PyObject *const *srcs, PyObject **lat, PyObject **lon)
{
    for (int i = 0; i < 4; i++) {
        PyObject *src = srcs[i];
        int t = src == NULL ? 0 : PyObject_IsTrue(src);
        if (t <= 0) {
            if (t < 0) return -1;
            continue;
        }
        PyObject *a = st_get(src, st_s_lat);
        if (a == NULL) return -1;
        int ok = is_num(a);
        Py_DECREF(a);
        if (ok) {
            PyObject *b = st_get(src, st_s_lon);
            if (b == NULL) return -1;
            ok = is_num(b);
            Py_DECREF(b);
        }
        if (!ok) continue;
        PyObject *x = PyObject_GetItem(src, st_s_lat); /* float(src["lat"]), float(src["lon"]) */
        *lat = x == NULL ? NULL : PyNumber_Float(x);
        Py_XDECREF(x);
        x = *lat == NULL ? NULL : PyObject_GetItem(src, st_s_lon);
        *lon = x == NULL ? NULL : PyNumber_Float(x);
        Py_XDECREF(x);
        return *lon == NULL ? -1 : 1;
    }
    return 0;
}


/* the clock's UTC for the epoch's time and date, its notes emitted as events; *utc a new reference */
static int resolve(Core *s, int has_tod, double tod, int has_dt, double dt, PyObject *date, PyObject *mono,
                   PyObject *wall, PyObject **utc)
{
    *utc = NULL;
    if (!has_tod) {
        *utc = Py_NewRef(Py_None);
        return 0;
    }
    PyObject *d = Py_NewRef(date);
    if (d != Py_None && has_dt && (tod - dt > HALF_DAY_S || dt - tod > HALF_DAY_S)) { /* a ZDA date across midnight */
        PyObject *nd = tod - dt > HALF_DAY_S ? PyNumber_InPlaceSubtract(d, s->call[C_ONE_DAY])
                                             : PyNumber_InPlaceAdd(d, s->call[C_ONE_DAY]);
        Py_SETREF(d, nd);
        if (d == NULL) return -1;
    }
    PyObject *t = PyFloat_FromDouble(tod);
    PyObject *args[6] = {t, d, wall, mono, NULL, NULL};
    PyObject *fn = t == NULL ? NULL : st_method(s, C_CLOCK_RESOLVE);
    PyObject *res = fn == NULL ? NULL : PyObject_Vectorcall(fn, args, 4, NULL);
    Py_XDECREF(t);
    Py_DECREF(d);
    PyObject *pair = res == NULL ? NULL : PySequence_Fast(res, "cannot unpack the clock's answer");
    Py_XDECREF(res);
    if (pair == NULL) return -1;
    if (PySequence_Fast_GET_SIZE(pair) != 2) {
        PyErr_SetString(PyExc_ValueError, "UtcClock.resolve(): expected 2 values");
        Py_DECREF(pair);
        return -1;
    }
    *utc = Py_NewRef(PySequence_Fast_GET_ITEM(pair, 0));
    PyObject *it = PyObject_GetIter(PySequence_Fast_GET_ITEM(pair, 1)), *note;
    Py_DECREF(pair);
    if (it == NULL) return -1;
    while ((note = PyIter_Next(it)) != NULL) { /* for kind, text, data in notes: self._emit(...) */
        PyObject *three = PySequence_Fast(note, "cannot unpack a clock note"), *r = NULL;
        Py_DECREF(note);
        if (three != NULL && PySequence_Fast_GET_SIZE(three) != 3)
            PyErr_SetString(PyExc_ValueError, "a clock note: expected 3 values");
        else if (three != NULL) {
            PyObject *a[6] = {mono, wall, PySequence_Fast_GET_ITEM(three, 0), PySequence_Fast_GET_ITEM(three, 1), *utc,
                              PySequence_Fast_GET_ITEM(three, 2)};
            r = st_call_model(s, "_emit", a, 6);
        }
        Py_XDECREF(three);
        if (r == NULL) break;
        Py_DECREF(r);
    }
    Py_DECREF(it);
    return PyErr_Occurred() ? -1 : 0;
}

/* the first of xs that is true (borrowed), else NONE_MAP; NULL on error */
static PyObject *first_true(PyObject *const *xs, int n)
{
    for (int i = 0; i < n; i++) {
        int t = xs[i] == NULL ? 0 : PyObject_IsTrue(xs[i]);
        if (t != 0) return t < 0 ? NULL : xs[i];
    }
    return NONE_MAP;
}

/* the epoch's used set from the tracker; the sorted tuple made again only when the set changed */
static int close_used(Core *s, PyObject *used, PyObject *mono)
{
    PyObject *in_view = st_method(s, C_SKY_IN_VIEW), *close = in_view == NULL ? NULL : st_method(s, C_GSA_CLOSE);
    PyObject *args[3] = {used, in_view, mono};
    PyObject *out = close == NULL ? NULL : PyObject_Vectorcall(close, args, 3, NULL);
    if (out == NULL) return -1;
    int ne = 0;
    if (out != s->used) {
        PyObject *c = PyObject_RichCompare(out, s->used, Py_NE);
        ne = c == NULL ? -1 : PyObject_IsTrue(c);
        Py_XDECREF(c);
    }
    if (ne > 0) { /* usually the same set: keep its sorted tuple */
        PyObject *lst = PySequence_List(out), *tup = NULL;
        if (lst != NULL && PyList_Sort(lst) == 0) tup = PyList_AsTuple(lst);
        Py_XDECREF(lst);
        if (tup == NULL || PyDict_SetItem(s->dict, S_used, out) < 0 || PyDict_SetItem(s->dict, S_used_sorted, tup) < 0) {
            Py_XDECREF(tup);
            ne = -1;
        } else {
            Py_SETREF(s->used, Py_NewRef(out));
            Py_SETREF(s->used_sorted, tup);
        }
    }
    Py_DECREF(out);
    return ne < 0 ? -1 : 0;
}

#define NV 27 /* epoch.EPOCH_FIELDS */

PyObject *st_close(Core *s)
{
    if (!s->open) {
        PyErr_SetNone(PyExc_AssertionError);
        return NULL;
    }
    /* op, self._open = self._open, None */
    PyObject *used = st_take_used(s), *seq[MAX_GSA_SEQ]; /* (the set before the tuples it reads are cleared) */
    int nseq = s->gsa_n;
    for (int i = 0; i < MAX_GSA_SEQ; i++) {
        seq[i] = s->gsa_seq[i];
        s->gsa_seq[i] = NULL;
    }
    s->gsa_n = 0;
    PyObject *mono = s->o_mono, *wall = s->o_wall, *bt = s->o_by_type, *date = s->o_date;
    s->o_mono = s->o_wall = s->o_by_type = s->o_date = NULL;
    int has_tod = s->o_has_tod, has_dt = s->o_has_date_tod;
    double tod = s->o_tod, dt = s->o_date_tod;
    PyObject *sent = PyTuple_New(s->nsent);
    for (int i = 0; sent != NULL && i < s->nsent; i++) {
        PyTuple_SET_ITEM(sent, i, s->sent[i]);
        s->sent[i] = NULL;
    }
    st_open_clear(s);
    PyObject *v[NV] = {NULL}, *ep = NULL, *alt = NULL, *sep = NULL, *nav = NULL, *num_sv = NULL, *x;
    if (used == NULL || sent == NULL || PyDict_SetItem(s->dict, S_open, Py_None) < 0) goto done;
    PyObject *pos[4] = {NULL, NULL, NULL, NULL}, *names[4] = {st_s_GGA, st_s_GNS, st_s_RMC, st_s_GLL};
    for (int i = 0; i < 4; i++) /* POSITION_FROM */
        if ((pos[i] = PyDict_GetItemWithError(bt, names[i])) == NULL && PyErr_Occurred()) goto done;
    PyObject *gga = pos[0], *gns = pos[1], *rmc = pos[2], *gsa, *gst, *vtg;
    if ((gsa = PyDict_GetItemWithError(bt, st_s_GSA)) == NULL && PyErr_Occurred()) goto done;
    if ((gst = PyDict_GetItemWithError(bt, st_s_GST)) == NULL && PyErr_Occurred()) goto done;
    if ((vtg = PyDict_GetItemWithError(bt, st_s_VTG)) == NULL && PyErr_Occurred()) goto done;
    if ((gsa = first_true(&gsa, 1)) == NULL || (gst = first_true(&gst, 1)) == NULL || (vtg = first_true(&vtg, 1)) == NULL)
        goto done;
    int r = position(pos, &v[4], &v[5]);
    if (r < 0) goto done;
    if (r == 0) v[4] = Py_NewRef(Py_None), v[5] = Py_NewRef(Py_None);
    PyObject *fix_src = first_true(pos, 4), *alt_src = fix_src == NULL ? NULL : first_true(pos, 2);
    if (alt_src == NULL || (alt = num(st_get(alt_src, S_alt))) == NULL || (sep = num(st_get(alt_src, S_sep))) == NULL)
        goto done;
    PyObject *gga2 = first_true(&gga, 1), *gns2 = gga2 == NULL ? NULL : first_true(&gns, 1);
    PyObject *rmc2 = gns2 == NULL ? NULL : first_true(&rmc, 1);
    if (rmc2 == NULL || (v[18] = speed_of(rmc2, vtg)) == NULL || (nav = st_get(gsa, S_navMode)) == NULL) goto done;
    if (resolve(s, has_tod, tod, has_dt, dt, date, mono, wall, &v[2]) < 0) goto done;
    if ((x = PyDict_GetItemWithError(s->dict, st_s_mono)) == NULL) { /* self._sky.expire(self._mono) */
        if (!PyErr_Occurred()) PyErr_SetObject(PyExc_AttributeError, st_s_mono);
        goto done;
    }
    PyObject *fn = st_method(s, C_SKY_EXPIRE);
    if (fn == NULL || (x = PyObject_CallOneArg(fn, x)) == NULL) goto done;
    Py_DECREF(x);
    Py_ssize_t used_len = PySet_GET_SIZE(used);
    if (close_used(s, used, mono) < 0 || st_keep_used(s, used, used_len, seq, nseq) < 0) goto done;
    PyObject *num_src = gga2 != NONE_MAP ? gga2 : gns2;
    if ((num_sv = st_get(num_src, S_numSV)) == NULL) goto done;
    v[0] = Py_NewRef(mono);
    v[1] = Py_NewRef(wall);
    if ((v[3] = quality(s, gga, fix_src)) == NULL) goto done;
    v[6] = alt != Py_None && sep != Py_None ? PyFloat_FromDouble(PyFloat_AS_DOUBLE(alt) + PyFloat_AS_DOUBLE(sep))
                                            : Py_NewRef(Py_None);
    v[7] = Py_NewRef(alt);
    v[8] = Py_NewRef(sep);
    v[9] = Py_NewRef(PyLong_CheckExact(num_sv) ? num_sv : Py_None);
    if (v[6] == NULL) goto done;
    PyObject *hd[3] = {gga2, gns2, gsa};
    if ((v[10] = first_of(hd, S_HDOP, S_HDOP, S_HDOP, 3)) == NULL || (v[11] = num(st_get(gsa, S_PDOP))) == NULL
        || (v[12] = num(st_get(gsa, S_VDOP))) == NULL)
        goto done;
    v[13] = Py_NewRef(PyLong_CheckExact(nav) ? nav : Py_None);
    PyObject *sig[4] = {S_stdLat, S_stdLong, S_stdAlt, S_rangeRms};
    for (int i = 0; i < 4; i++)
        if ((v[14 + i] = num(st_get(gst, sig[i]))) == NULL) goto done;
    PyObject *cg[2] = {rmc2, vtg}, *da[2] = {gga2, gns2};
    if ((v[19] = first_of(cg, S_cog, S_cogt, NULL, 2)) == NULL) goto done;
    if ((v[20] = first_of(da, S_diffAge, S_diffAge, NULL, 2)) == NULL || (fn = st_method(s, C_SKY_OBS)) == NULL
        || (v[21] = PyObject_CallOneArg(fn, s->used)) == NULL)
        goto done;
    v[22] = Py_NewRef(s->used_sorted);
    v[23] = sent;
    sent = NULL;
    if ((x = st_collab(s, C_GSA)) == NULL || (v[24] = PyObject_GetAttr(x, S_unknown)) == NULL
        || (x = st_collab(s, C_CLOCK)) == NULL || (v[25] = PyObject_GetAttr(x, S_date_known)) == NULL)
        goto done;
    if ((x = PyDict_GetItemWithError(bt, st_s_DTM)) == NULL && PyErr_Occurred()) goto done;
    v[26] = x == NULL || x == Py_None ? Py_NewRef(Py_None) : PyObject_CallOneArg(s->call[C_DATUM], x);
    if (v[26] == NULL) goto done;
    PyObject *tup = PyTuple_New(NV);
    if (tup == NULL) goto done;
    for (int i = 0; i < NV; i++) {
        PyTuple_SET_ITEM(tup, i, v[i]);
        v[i] = NULL;
    }
    ep = PyObject_CallOneArg(s->call[C_MAKE_EPOCH], tup);
    Py_DECREF(tup);
    PyObject *ct = ep == NULL ? NULL : has_tod ? PyFloat_FromDouble(tod) : Py_NewRef(Py_None);
    if (ct == NULL || PyDict_SetItem(s->dict, S_last_epoch, ep) < 0 || PyDict_SetItem(s->dict, S_closed_tod, ct) < 0) {
        Py_XDECREF(ct);
        Py_CLEAR(ep);
        goto done;
    }
    Py_DECREF(ct);
    s->has_closed = has_tod;
    s->closed_tod = tod;
    if (st_count(s, S_epochs) < 0) Py_CLEAR(ep);
done:
    for (int i = 0; i < NV; i++) Py_XDECREF(v[i]);
    Py_XDECREF(sent);
    Py_XDECREF(alt);
    Py_XDECREF(sep);
    Py_XDECREF(nav);
    Py_XDECREF(num_sv);
    Py_XDECREF(mono);
    Py_XDECREF(wall);
    Py_XDECREF(bt);
    Py_XDECREF(used);
    Py_XDECREF(date);
    for (int i = 0; i < MAX_GSA_SEQ; i++) Py_XDECREF(seq[i]);
    return ep;
}
