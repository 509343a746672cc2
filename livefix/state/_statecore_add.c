/* livefix.state._statecore, the per-type handlers of StateModel (livefix/state/model.py _on_fix,
 * _on_dated, _on_gst, _on_gsa, _on_gsv) and a C twin of livefix.state.used.solution_gsa, step for step.
 *
 * Each handler reads the same fields in the same order as the reference and keeps its first-wins
 * rule over the open epoch's by_type dict; nothing is made on the hot lines but what the reference
 * stores. The used tracker, the GSV assembler and the sky are called through their bound methods.
 */
#include "_statecore.h"

static PyObject *S_date, *S_day, *S_month, *S_year, *S_PDOP, *S_HDOP, *S_VDOP, *S_PER;

int st_add_init(void)
{
#define INTERN(var, text) ((var) = PyUnicode_InternFromString(text)) == NULL
    return INTERN(S_date, "date") || INTERN(S_day, "day") || INTERN(S_month, "month") || INTERN(S_year, "year")
        || INTERN(S_PDOP, "PDOP") || INTERN(S_HDOP, "HDOP") || INTERN(S_VDOP, "VDOP")
        || INTERN(S_PER, "per_system_dops") ? -1 : 0;
#undef INTERN
}

/* _on_fix: the first position sentence of its type that has a position wins */
int st_on_fix(Core *s, PyObject *mid, PyObject *f)
{
    PyObject *bt = s->o_by_type;
    PyObject *had = PyDict_GetItemWithError(bt, mid);
    if (had == NULL && PyErr_Occurred()) return -1;
    if (had == NULL || had == Py_None) return PyDict_SetItem(bt, mid, f);
    Py_INCREF(had);
    PyObject *hl = st_get(had, st_s_lat);
    Py_DECREF(had);
    if (hl == NULL) return -1;
    int had_float = PyFloat_CheckExact(hl);
    Py_DECREF(hl);
    if (had_float) return 0;
    PyObject *fl = st_get(f, st_s_lat);
    if (fl == NULL) return -1;
    int now_float = PyFloat_CheckExact(fl);
    Py_DECREF(fl);
    return now_float ? PyDict_SetItem(bt, mid, f) : 0;
}

/* type(v) is int for f.get(day), f.get(month), f.get(year) in turn: 1, 0, -1 */
static int all_int(PyObject *f)
{
    PyObject *names[3] = {S_day, S_month, S_year};
    for (int i = 0; i < 3; i++) {
        PyObject *v = st_get(f, names[i]);
        if (v == NULL) return -1;
        int ok = PyLong_CheckExact(v);
        Py_DECREF(v);
        if (!ok) return 0;
    }
    return 1;
}

/* ZDA's date(year, month, day); NULL with no error for an impossible date */
static PyObject *zda_date(Core *s, PyObject *f)
{
    PyObject *v[3] = {NULL, NULL, NULL}, *names[3] = {S_year, S_month, S_day}, *d = NULL;
    int i = 0;
    for (; i < 3; i++)
        if ((v[i] = PyObject_GetItem(f, names[i])) == NULL) break;
    if (i == 3) d = PyObject_Vectorcall(s->call[C_DATE], v, 3, NULL);
    for (int k = 0; k < i; k++) Py_DECREF(v[k]);
    if (d == NULL && i == 3 && (PyErr_ExceptionMatches(PyExc_ValueError) || PyErr_ExceptionMatches(PyExc_OverflowError)))
        PyErr_Clear(); /* impossible date: the epoch keeps the carried-forward date */
    return d;
}

/* _on_dated: RMC (a fix with its date) and ZDA (a date with its own time) */
int st_on_dated(Core *s, PyObject *msg, PyObject *mid, int rmc)
{
    PyObject *f = st_attr(s, msg, 2);
    if (f == NULL) return -1;
    int r = -1;
    if (rmc) r = st_on_fix(s, mid, f);
    else r = PyDict_SetDefault(s->o_by_type, mid, f) == NULL ? -1 : 0;
    PyObject *d = r < 0 ? NULL : st_get(f, S_date);
    if (d == NULL) {
        r = -1;
    } else if (st_is_date(d)) {
        Py_SETREF(s->o_date, Py_NewRef(d)); /* RMC: the date of its own time of fix */
        s->o_has_date_tod = 0;
    } else if ((r = all_int(f)) > 0) {
        PyObject *day = zda_date(s, f);
        r = day == NULL && PyErr_Occurred() ? -1 : 0;
        if (day != NULL) {
            PyObject *t = st_get(f, st_s_time);
            double zt = 0.0;
            int has = t == NULL ? -1 : st_tod_of(s, t, &zt);
            Py_XDECREF(t);
            if (has < 0) {
                r = -1;
            } else if (has && s->o_date == Py_None) { /* ZDA: the date of the ZDA's own time */
                Py_SETREF(s->o_date, Py_NewRef(day));
                s->o_has_date_tod = 1;
                s->o_date_tod = zt;
            }
            Py_DECREF(day);
        }
    }
    Py_XDECREF(d);
    Py_DECREF(f);
    return r < 0 ? -1 : 0;
}

/* _on_gst: kept for the epoch of its own time only */
int st_on_gst(Core *s, PyObject *msg)
{
    PyObject *f = st_attr(s, msg, 2);
    PyObject *t = f == NULL ? NULL : st_get(f, st_s_time);
    if (t == NULL) {
        Py_XDECREF(f);
        return -1;
    }
    double v = s->tod;
    int has = t == s->tod_of ? s->has_tod : st_tod_of(s, t, &v); /* often its fix's time object */
    Py_DECREF(t);
    int r = 0;
    if (has < 0) {
        r = -1;
    } else if (!has || !s->o_has_tod || v == s->o_tod) {
        r = PyDict_SetDefault(s->o_by_type, st_s_GST, f) == NULL ? -1 : 0;
    } else if (s->has_closed && v == s->closed_tod) {
        r = st_count(s, st_s_late); /* it describes the epoch already published */
    } else { /* for the epoch of that time, if it comes next */
        s->has_ahead = 1;
        s->ahead_t = v;
        Py_XSETREF(s->ahead_f, Py_NewRef(f));
        r = st_put_ahead(s);
    }
    Py_DECREF(f);
    return r;
}

/* the truth of `a == b` (Python's operator: no identity shortcut); -1 on error */
static int eq_true(PyObject *a, PyObject *b)
{
    PyObject *r = PyObject_RichCompare(a, b, Py_EQ);
    if (r == NULL) return -1;
    int t = r == Py_True ? 1 : r == Py_False ? 0 : PyObject_IsTrue(r);
    Py_DECREF(r);
    return t;
}

/* f.get(name) == had.get(name), in that order */
static int same_field(PyObject *f, PyObject *had, PyObject *name)
{
    PyObject *a = st_get(f, name), *b = a == NULL ? NULL : st_get(had, name);
    int r = b == NULL ? -1 : eq_true(a, b);
    Py_XDECREF(a);
    Py_XDECREF(b);
    return r;
}

/* m is a mappingproxy over d and nothing but it holds d: what it maps can never change */
static int sealed(PyObject *m, PyObject *d)
{
    return Py_IS_TYPE(m, &PyDictProxy_Type) && d != NULL && Py_REFCNT(d) == 1;
}

/* None or a value of an exact builtin type: comparing or testing it runs no code */
static int plain(PyObject *v)
{
    return v == Py_None || PyFloat_CheckExact(v) || PyLong_CheckExact(v) || PyUnicode_CheckExact(v) || PyBool_Check(v);
}

void st_picks_clear(Core *s)
{
    for (int i = 0; i < GSA_PICKS; i++) {
        Py_CLEAR(s->picks[i].had);
        Py_CLEAR(s->picks[i].f);
    }
}

/* remember solution_gsa(had, f) -> had (pick_f 0) or f (1) when it may be (see Core.picks) */
static int remember_pick(Core *s, PyObject *had, PyObject *f, int pick_f, int branch)
{
    if (!sealed(had, kit_plain_dict(had)) || !sealed(f, kit_plain_dict(f))) return 0;
    if (branch == 3) { /* the answer compared HDOP and VDOP too */
        PyObject *names[2] = {S_HDOP, S_VDOP}, *ms[2] = {had, f};
        for (int i = 0; i < 2; i++)
            for (int j = 0; j < 2; j++) {
                PyObject *v = st_get(ms[j], names[i]);
                if (v == NULL) return -1;
                int ok = plain(v);
                Py_DECREF(v);
                if (!ok) return 0;
            }
    }
    int k = s->picks_next;
    s->picks_next = (k + 1) % GSA_PICKS;
    Py_XSETREF(s->picks[k].had, Py_NewRef(had));
    Py_XSETREF(s->picks[k].f, Py_NewRef(f));
    s->picks[k].pick_f = pick_f;
    return 0;
}

/* used.solution_gsa(had, f): the cheap decisions here; other mappings and the rare copy with the
 * DOPs dropped are the reference's own. A new reference. */
static PyObject *solution_gsa(Core *s, PyObject *had, PyObject *f)
{
    if (had == Py_None) return Py_NewRef(f);
    for (int i = 0; i < GSA_PICKS; i++)
        if (s->picks[i].had == had && s->picks[i].f == f) {
            s->picks_hit++;
            return Py_NewRef(s->picks[i].pick_f ? f : had);
        }
    if (kit_plain_dict(had) == NULL || kit_plain_dict(f) == NULL) goto python;
    PyObject *hp = st_get(had, S_PDOP), *fp = hp == NULL ? NULL : st_get(f, S_PDOP);
    PyObject *per = fp == NULL ? NULL : st_get(had, S_PER), *pick = NULL;
    int r = per == NULL ? -1 : PyObject_IsTrue(per), branch = 0;
    if (r != 0 || !PyFloat_CheckExact(fp)) {
        pick = r < 0 ? NULL : had;
        branch = 1;
    } else if (!PyFloat_CheckExact(hp)) {
        pick = f;
        branch = 2;
    } else if (PyFloat_AS_DOUBLE(fp) == PyFloat_AS_DOUBLE(hp)) {
        r = same_field(f, had, S_HDOP);
        if (r > 0) r = same_field(f, had, S_VDOP);
        if (r > 0) pick = had;
        branch = 3;
    }
    int plain_per = per != NULL && plain(per);
    Py_XDECREF(hp);
    Py_XDECREF(fp);
    Py_XDECREF(per);
    if (r < 0) return NULL;
    if (pick != NULL) {
        if (plain_per && remember_pick(s, had, f, pick == f, branch) < 0) return NULL;
        return Py_NewRef(pick);
    }
python:;
    PyObject *args[2] = {had, f};
    return PyObject_Vectorcall(s->call[C_SOLUTION_GSA], args, 2, NULL);
}

/* _on_gsa: the solution's GSA fields, and the list's placed pairs join the epoch's used set */
int st_on_gsa(Core *s, PyObject *msg)
{
    PyObject *f = st_attr(s, msg, 2);
    if (f == NULL) return -1;
    PyObject *had = PyDict_GetItemWithError(s->o_by_type, st_s_GSA);
    int r = 0;
    if (had == NULL && PyErr_Occurred()) r = -1;
    else if (had != f) {
        Py_XINCREF(had);
        PyObject *pick = solution_gsa(s, had != NULL ? had : Py_None, f);
        Py_XDECREF(had);
        r = pick == NULL ? -1 : PyDict_SetItem(s->o_by_type, st_s_GSA, pick);
        Py_XDECREF(pick);
    }
    PyObject *talker = r < 0 ? NULL : st_attr(s, msg, 0);
    PyObject *args[2] = {talker, f};
    PyObject *add = talker == NULL ? NULL : st_method(s, C_GSA_ADD);
    PyObject *placed = add == NULL ? NULL : PyObject_Vectorcall(add, args, 2, NULL);
    Py_XDECREF(talker);
    Py_DECREF(f);
    if (placed == NULL) return -1;
    r = PyObject_IsTrue(placed);
    if (r > 0) r = st_join_used(s, placed);
    Py_DECREF(placed);
    return r < 0 ? -1 : 0;
}

/* the (group, sats, broken) of GsvAssembler.add, borrowed from t; -1 when not three of them */
static int unpack3(PyObject *t, PyObject **out)
{
    if (!PyTuple_CheckExact(t) || PyTuple_GET_SIZE(t) != 3) {
        PyErr_SetString(PyExc_ValueError, "GsvAssembler.add(): expected 3 values");
        return -1;
    }
    for (int i = 0; i < 3; i++) out[i] = PyTuple_GET_ITEM(t, i);
    return 0;
}

/* _on_gsv: a part to the assembler; a set that ended replaces its group in the sky */
int st_on_gsv(Core *s, PyObject *msg, PyObject *mono, PyObject *wall)
{
    PyObject *talker = st_attr(s, msg, 0);
    PyObject *f = talker == NULL ? NULL : st_attr(s, msg, 2);
    PyObject *args[3] = {talker, f, NULL}, *v[3];
    PyObject *add = f == NULL ? NULL : st_method(s, C_GSV_ADD);
    PyObject *res = add == NULL ? NULL : PyObject_Vectorcall(add, args, 2, NULL);
    Py_XDECREF(talker);
    Py_XDECREF(f);
    if (res == NULL || unpack3(res, v) < 0) goto fail;
    PyObject *gsv = st_collab(s, C_GSV), *unknown = NULL;
    if (gsv != NULL && s->unknown_at > 0) { /* the member read as GetAttr reads it (NULL reads as None) */
        unknown = *(PyObject **)((char *)gsv + s->unknown_at);
        unknown = Py_NewRef(unknown != NULL ? unknown : Py_None);
    } else if (gsv != NULL) {
        unknown = PyObject_GetAttr(gsv, st_s_last_unknown);
    }
    int r = unknown == NULL ? -1 : PyObject_IsTrue(unknown);
    if (r > 0) {
        PyObject *t = st_attr(s, msg, 0);
        PyObject *src = t == NULL ? NULL : PyNumber_Add(t, st_s_GSV);
        PyObject *a[2] = {src, unknown};
        PyObject *note = src == NULL ? NULL : st_method(s, C_GSA_NOTE);
        PyObject *n = note == NULL ? NULL : PyObject_Vectorcall(note, a, 2, NULL);
        r = n == NULL ? -1 : 0;
        Py_XDECREF(t);
        Py_XDECREF(src);
        Py_XDECREF(n);
    }
    Py_XDECREF(unknown);
    if (r < 0) goto fail;
    if (v[1] != Py_None) {
        PyObject *a[3] = {v[0], v[1], mono};
        PyObject *replace = st_method(s, C_SKY_REPLACE);
        PyObject *n = replace == NULL ? NULL : PyObject_Vectorcall(replace, a, 3, NULL);
        if (n == NULL) goto fail;
        Py_DECREF(n);
    }
    if ((r = PyObject_IsTrue(v[2])) > 0) { /* incomplete sets: counted, reported at a capped rate */
        PyObject *old = PyDict_GetItemWithError(s->dict, st_s_gsv_unreported);
        if (old == NULL) {
            if (!PyErr_Occurred()) PyErr_SetObject(PyExc_AttributeError, st_s_gsv_unreported);
            goto fail;
        }
        PyObject *sum = PyNumber_InPlaceAdd(old, v[2]);
        r = sum == NULL ? -1 : PyDict_SetItem(s->dict, st_s_gsv_unreported, sum);
        Py_XDECREF(sum);
        PyObject *a[2] = {mono, wall};
        PyObject *n = r < 0 ? NULL : st_call_model(s, "_gsv_event", a, 2);
        r = n == NULL ? -1 : 0;
        Py_XDECREF(n);
    }
    if (r < 0) goto fail;
    Py_DECREF(res);
    return 0;
fail:
    Py_XDECREF(res);
    return -1;
}
