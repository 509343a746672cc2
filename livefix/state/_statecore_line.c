/* livefix.state._statecore, on_sentence's prelude: dispatch by sentence type and the open epoch's
 * bookkeeping (StateModel.on_sentence of livefix/state/model.py), step for step.
 *
 * The module's overview is in _statecore.c. This file alone uses the datetime C API (its capsule
 * pointer is per file): the others ask st_tod_of and st_is_date.
 */
#include "_statecore.h"
#include <datetime.h>

PyObject *st_s_get, *st_s_time, *st_s_lat, *st_s_lon, *st_s_GSA, *st_s_GST, *st_s_GGA, *st_s_GNS, *st_s_RMC,
    *st_s_GLL, *st_s_VTG, *st_s_DTM, *st_s_late, *st_s_gsv_unreported, *st_s_last_unknown, *st_s_GSV,
    *st_s_gst_ahead, *st_s_mono;
static PyObject *S_wall, *S_open, *S_tod_of, *S_tod, *S_TXT, *EMPTY, *HANDLERS, *GAP;

enum { H_FIX = 1, H_RMC, H_ZDA, H_GST, H_GSA, H_GSV };

/* ---- small helpers shared by the files ---- */

int st_tod_of(Core *s, PyObject *t, double *out)
{
    if (PyTime_CheckExact(t)) { /* the reference's formula: an int sum, then + microsecond / 1e6 */
        long whole = PyDateTime_TIME_GET_HOUR(t) * 3600L + PyDateTime_TIME_GET_MINUTE(t) * 60L
                     + PyDateTime_TIME_GET_SECOND(t);
        *out = (double)whole + (double)PyDateTime_TIME_GET_MICROSECOND(t) / 1e6;
        return 1;
    }
    if (!PyTime_Check(t)) return 0;
    PyObject *r = PyObject_CallOneArg(s->call[C_TOD_OF], t); /* a subclass: its own attributes */
    if (r == NULL) return -1;
    int ok = PyFloat_Check(r);
    if (ok) *out = PyFloat_AsDouble(r);
    Py_DECREF(r);
    return ok;
}

int st_is_date(PyObject *d) { return PyDate_Check(d); }

int st_count(Core *s, PyObject *name)
{
    PyObject *old = PyDict_GetItemWithError(s->dict, name);
    if (old == NULL) {
        if (!PyErr_Occurred()) PyErr_SetObject(PyExc_AttributeError, name);
        return -1;
    }
    PyObject *one = PyLong_FromLong(1);
    PyObject *n = one == NULL ? NULL : PyNumber_Add(old, one);
    Py_XDECREF(one);
    if (n == NULL) return -1;
    int r = PyDict_SetItem(s->dict, name, n);
    Py_DECREF(n);
    return r;
}

int st_put_ahead(Core *s)
{
    if (!s->has_ahead) return PyDict_SetItem(s->dict, st_s_gst_ahead, Py_None);
    PyObject *t = PyFloat_FromDouble(s->ahead_t);
    PyObject *pair = t == NULL ? NULL : PyTuple_Pack(2, t, s->ahead_f);
    Py_XDECREF(t);
    if (pair == NULL) return -1;
    int r = PyDict_SetItem(s->dict, st_s_gst_ahead, pair);
    Py_DECREF(pair);
    return r;
}

PyObject *st_attr(Core *s, PyObject *msg, int k)
{
    static const char *const names[] = {"talker", "msg_id", "fields", "proprietary"};
    if (Py_IS_TYPE(msg, (PyTypeObject *)s->call[C_DECODED])) {
        PyObject *v = *(PyObject **)((char *)msg + s->off[k]);
        if (v != NULL) return Py_NewRef(v);
        PyErr_Format(PyExc_AttributeError, "'Decoded' object has no attribute '%s'", names[k]);
        return NULL;
    }
    return PyObject_GetAttrString(msg, names[k]);
}

/* ---- the open epoch ---- */

static int open_epoch(Core *s, PyObject *mono, PyObject *wall, int has_tod, double tod)
{
    PyObject *bt = PyDict_New(); /* op.used is made when needed (st_join_used, st_take_used) */
    if (bt == NULL || PyDict_SetItem(s->dict, S_open, (PyObject *)s) < 0) {
        Py_XDECREF(bt);
        return -1;
    }
    st_open_clear(s);
    s->open = 1;
    s->o_mono = Py_NewRef(mono);
    s->o_wall = Py_NewRef(wall);
    s->o_has_tod = has_tod;
    s->o_tod = tod;
    s->o_by_type = bt;
    s->o_date = Py_NewRef(Py_None);
    s->o_has_date_tod = 0;
    return 0;
}

static PyObject *key_str(const Key *k) /* the reference's key string; new reference */
{
    return k->key != NULL ? Py_NewRef(k->key) : PyUnicode_Concat(k->talker, k->mid);
}

/* key in op.timed_keys: 1, 0, or -1 on error */
static int has_key(Core *s, const Key *k)
{
    for (Py_ssize_t i = 0; i < s->nkeys; i++) {
        const Key *o = &s->keys[i];
        if (k->key == NULL && o->key == NULL) { /* exact str: talker + one of the 3-letter ids */
            if (PyUnicode_Compare(k->talker, o->talker) == 0 && PyUnicode_Compare(k->mid, o->mid) == 0) return 1;
            continue;
        }
        PyObject *a = key_str(k), *b = a == NULL ? NULL : key_str(o);
        int r = b == NULL ? -1 : PyObject_RichCompareBool(a, b, Py_EQ);
        Py_XDECREF(a);
        Py_XDECREF(b);
        if (r != 0) return r;
    }
    return 0;
}

static int add_key(Core *s, const Key *k)
{
    int r = has_key(s, k);
    if (r != 0) return r < 0 ? -1 : 0;
    if (s->nkeys == s->keys_cap) {
        Py_ssize_t cap = s->keys_cap ? s->keys_cap * 2 : 8;
        Key *keys = PyMem_Realloc(s->keys, (size_t)cap * sizeof(Key));
        if (keys == NULL) {
            PyErr_NoMemory();
            return -1;
        }
        s->keys = keys;
        s->keys_cap = cap;
    }
    Key *o = &s->keys[s->nkeys++];
    o->talker = Py_XNewRef(k->talker);
    o->mid = Py_XNewRef(k->mid);
    o->key = Py_XNewRef(k->key);
    return 0;
}

/* mono - op.mono > UNTIMED_GAP_S */
static int gap_over(Core *s, PyObject *mono)
{
    if (PyFloat_CheckExact(mono) && PyFloat_CheckExact(s->o_mono))
        return PyFloat_AS_DOUBLE(mono) - PyFloat_AS_DOUBLE(s->o_mono) > UNTIMED_GAP_S;
    PyObject *d = PyNumber_Subtract(mono, s->o_mono);
    PyObject *r = d == NULL ? NULL : PyObject_RichCompare(d, GAP, Py_GT);
    Py_XDECREF(d);
    if (r == NULL) return -1;
    int b = PyObject_IsTrue(r);
    Py_DECREF(r);
    return b;
}

/* the timed branch: tod and key, then join, count as late (1), or close and open */
static int timed(Core *s, PyObject *msg, PyObject *mid, PyObject *mono, PyObject *wall, PyObject **out)
{
    PyObject *f = st_attr(s, msg, 2);
    PyObject *t = f == NULL ? NULL : st_get(f, st_s_time);
    Py_XDECREF(f);
    if (t == NULL) return -1;
    if (t != s->tod_of) { /* the decoder shares one time object per text: GGA, RMC, ... alike */
        double v = 0.0;
        int has = st_tod_of(s, t, &v);
        PyObject *fv = has > 0 ? PyFloat_FromDouble(v) : Py_NewRef(Py_None);
        if (has < 0 || fv == NULL || PyDict_SetItem(s->dict, S_tod_of, t) < 0 || PyDict_SetItem(s->dict, S_tod, fv) < 0) {
            Py_XDECREF(fv);
            Py_DECREF(t);
            return -1;
        }
        Py_DECREF(fv);
        Py_SETREF(s->tod_of, Py_NewRef(t));
        s->has_tod = has;
        s->tod = v;
    }
    Py_DECREF(t);
    int has = s->has_tod;
    double tod = s->tod;
    PyObject *talker = st_attr(s, msg, 0);
    if (talker == NULL) return -1;
    Key k = {talker, mid, NULL};
    if (!PyUnicode_CheckExact(talker) || !PyUnicode_CheckExact(mid)) {
        k.key = PyNumber_Add(talker, mid);
        k.talker = k.mid = NULL;
        Py_DECREF(talker);
        talker = NULL;
        if (k.key == NULL) return -1;
    }
    int r = 0;
    if (s->open) {
        int hit;
        if (has && !s->o_has_tod && s->nkeys == 0) {
            s->o_has_tod = 1;
            s->o_tod = tod; /* untimed lines came first: this epoch's time is now known */
        } else if (has && s->has_closed && tod == s->closed_tod && s->o_has_tod && s->o_tod != tod) {
            r = st_count(s, st_s_late) < 0 ? -1 : 1; /* belongs to the epoch already published */
            goto done;
        } else if (has && s->o_has_tod && tod == s->o_tod) {
            /* the same time of fix from another talker or repeated: one epoch */
        } else if ((hit = has_key(s, &k)) != 0 || has != s->o_has_tod || (has && tod != s->o_tod)) {
            PyObject *ep = hit < 0 ? NULL : st_close(s);
            if (ep == NULL || (*out = PyList_New(1)) == NULL) {
                Py_XDECREF(ep);
                r = -1;
                goto done;
            }
            PyList_SET_ITEM(*out, 0, ep);
        }
    }
    if ((!s->open && open_epoch(s, mono, wall, has, tod) < 0) || add_key(s, &k) < 0) r = -1;
done:
    Py_XDECREF(talker);
    Py_XDECREF(k.key);
    return r;
}

/* self._mono, self._wall = mono, wall; skipped when the dict is known to hold these very objects */
static int put_times(Core *s, PyObject *mono, PyObject *wall)
{
    uint64_t now = kit_dict_stamp(s->dict);
    if (now != 0 && now == s->mw_stamp && mono == s->mw_mono && wall == s->mw_wall) return 0;
    s->mw_stamp = 0;
    if (PyDict_SetItem(s->dict, st_s_mono, mono) < 0 || PyDict_SetItem(s->dict, S_wall, wall) < 0) return -1;
    /* what the dict holds now (an old value's release may have run code): checked, then remembered */
    if ((now = kit_dict_stamp(s->dict)) == 0) return 0;
    PyObject *m = PyDict_GetItemWithError(s->dict, st_s_mono);
    PyObject *w = m == NULL ? NULL : PyDict_GetItemWithError(s->dict, S_wall);
    if (w == NULL && PyErr_Occurred()) return -1;
    if (m == mono && w == wall && kit_dict_stamp(s->dict) == now) {
        s->mw_stamp = now;
        s->mw_mono = mono;
        s->mw_wall = wall;
    }
    return 0;
}

/* the dispatch of a msg id: its TIMED membership, whether it is "TXT", its handler (H_*, 0 none;
 * -1: not an exact str, looked up later, in the reference's order); remembered for exact str ids.
 * 0, or -1 with an error set. */
static int kind_of(Core *s, PyObject *mid, int *timed, int *txt, int *kind)
{
    for (int i = 0; i < s->nkinds; i++)
        if (s->kinds[i].mid == mid) {
            *timed = s->kinds[i].timed;
            *txt = s->kinds[i].txt;
            *kind = s->kinds[i].kind;
            return 0;
        }
    if ((*timed = PySet_Contains(s->call[C_TIMED], mid)) < 0) return -1;
    *txt = 0;
    if (!*timed) {
        *txt = PyUnicode_CheckExact(mid) ? PyUnicode_Compare(mid, S_TXT) == 0
                                         : PyObject_RichCompareBool(mid, S_TXT, Py_EQ); /* no identity: a str */
        if (*txt < 0) return -1;
    }
    *kind = -1;
    if (!PyUnicode_CheckExact(mid)) return 0; /* its handler looked up where the reference does */
    PyObject *h = PyDict_GetItemWithError(HANDLERS, mid);
    if (h == NULL && PyErr_Occurred()) return -1;
    *kind = h == NULL ? 0 : (int)PyLong_AsLong(h);
    if (s->nkinds < ST_KINDS) {
        int i = s->nkinds++;
        s->kinds[i].mid = Py_NewRef(mid);
        s->kinds[i].timed = (signed char)*timed;
        s->kinds[i].txt = (signed char)*txt;
        s->kinds[i].kind = (signed char)*kind;
    }
    return 0;
}

PyObject *st_on_sentence(Core *s, PyObject *msg, PyObject *mono, PyObject *wall)
{
    if (put_times(s, mono, wall) < 0) return NULL;
    PyObject *prop = st_attr(s, msg, 3);
    int skip = prop == NULL ? -1 : prop == Py_False ? 0 : PyObject_IsTrue(prop);
    Py_XDECREF(prop);
    if (skip != 0) return skip < 0 ? NULL : Py_NewRef(EMPTY);
    PyObject *mid = st_attr(s, msg, 1), *out = NULL;
    if (mid == NULL) return NULL;
    int is_timed, txt, kind;
    if (kind_of(s, mid, &is_timed, &txt, &kind) < 0) goto fail;
    if (!is_timed) { /* GSA, GSV, VTG, ZDA, GST, TXT...: join the open epoch (most lines) */
        if (txt) {
            PyObject *args[3] = {msg, mono, wall};
            PyObject *r = st_call_model(s, "_on_txt", args, 3);
            Py_DECREF(mid);
            if (r == NULL) return NULL;
            Py_DECREF(r);
            return Py_NewRef(EMPTY);
        }
        if (s->open && !s->o_has_tod) {
            int gap = gap_over(s, mono);
            if (gap < 0) goto fail;
            if (gap) {
                PyObject *ep = st_close(s);
                if (ep == NULL || (out = PyList_New(1)) == NULL) {
                    Py_XDECREF(ep);
                    goto fail;
                }
                PyList_SET_ITEM(out, 0, ep);
            }
        }
        if (!s->open && open_epoch(s, mono, wall, 0, 0.0) < 0) goto fail;
    } else {
        int r = timed(s, msg, mid, mono, wall, &out);
        if (r < 0) goto fail;
        if (r > 0) { /* late: counted, not re-opened */
            Py_DECREF(mid);
            return out != NULL ? out : Py_NewRef(EMPTY);
        }
    }
    if (s->has_ahead && s->o_has_tod && s->ahead_t == s->o_tod) { /* its GST came first */
        PyObject *had = PyDict_SetDefault(s->o_by_type, st_s_GST, s->ahead_f);
        if (had == NULL) goto fail;
        s->has_ahead = 0;
        Py_CLEAR(s->ahead_f);
        if (st_put_ahead(s) < 0) goto fail;
    }
    if (s->nsent < MAX_SENTENCES) s->sent[s->nsent++] = Py_NewRef(mid);
    int r = 0;
    if (kind < 0) {
        PyObject *h = PyDict_GetItemWithError(HANDLERS, mid);
        if (h == NULL && PyErr_Occurred()) goto fail;
        kind = h == NULL ? 0 : (int)PyLong_AsLong(h);
    }
    switch (kind) {
    case H_FIX: {
        PyObject *f = st_attr(s, msg, 2);
        r = f == NULL ? -1 : st_on_fix(s, mid, f);
        Py_XDECREF(f);
        break;
    }
    case H_RMC: r = st_on_dated(s, msg, mid, 1); break;
    case H_ZDA: r = st_on_dated(s, msg, mid, 0); break;
    case H_GST: r = st_on_gst(s, msg); break;
    case H_GSA: r = st_on_gsa(s, msg); break;
    case H_GSV: r = st_on_gsv(s, msg, mono, wall); break;
    default:
        r = PyDict_Contains(s->o_by_type, mid);
        if (r == 0) {
            PyObject *f = st_attr(s, msg, 2);
            r = f == NULL ? -1 : PyDict_SetItem(s->o_by_type, mid, f);
            Py_XDECREF(f);
        }
    }
    if (r < 0) goto fail;
    Py_DECREF(mid);
    return out != NULL ? out : Py_NewRef(EMPTY);
fail:
    Py_DECREF(mid);
    Py_XDECREF(out);
    return NULL;
}

#define INTERN(var, text) ((var) = PyUnicode_InternFromString(text)) == NULL

int st_line_init(void)
{
    PyDateTime_IMPORT;
    if (PyDateTimeAPI == NULL) return -1;
    if (INTERN(st_s_get, "get") || INTERN(st_s_time, "time") || INTERN(st_s_lat, "lat") || INTERN(st_s_lon, "lon")
        || INTERN(st_s_GSA, "GSA") || INTERN(st_s_GST, "GST") || INTERN(st_s_GGA, "GGA") || INTERN(st_s_GNS, "GNS")
        || INTERN(st_s_RMC, "RMC") || INTERN(st_s_GLL, "GLL") || INTERN(st_s_VTG, "VTG") || INTERN(st_s_DTM, "DTM")
        || INTERN(st_s_late, "late") || INTERN(st_s_gsv_unreported, "_gsv_unreported")
        || INTERN(st_s_last_unknown, "last_unknown") || INTERN(st_s_GSV, "GSV") || INTERN(st_s_gst_ahead, "_gst_ahead")
        || INTERN(st_s_mono, "_mono") || INTERN(S_wall, "_wall") || INTERN(S_open, "_open") || INTERN(S_tod_of, "_tod_of")
        || INTERN(S_tod, "_tod") || INTERN(S_TXT, "TXT") || (EMPTY = PyTuple_New(0)) == NULL
        || (GAP = PyFloat_FromDouble(UNTIMED_GAP_S)) == NULL || (HANDLERS = PyDict_New()) == NULL)
        return -1;
    static const char *const names[] = {"GGA", "GNS", "GLL", "RMC", "ZDA", "GST", "GSA", "GSV"};
    static const long kinds[] = {H_FIX, H_FIX, H_FIX, H_RMC, H_ZDA, H_GST, H_GSA, H_GSV};
    for (int i = 0; i < 8; i++) {
        PyObject *k = PyUnicode_InternFromString(names[i]), *v = k == NULL ? NULL : PyLong_FromLong(kinds[i]);
        int r = v == NULL ? -1 : PyDict_SetItem(HANDLERS, k, v);
        Py_XDECREF(k);
        Py_XDECREF(v);
        if (r < 0) return -1;
    }
    return 0;
}
