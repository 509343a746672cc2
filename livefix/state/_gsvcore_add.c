/* livefix.state._gsvcore: add(), gsv.GsvAssembler.add branch for branch, and the reading of one
 * part: its fields, its satellites (the Python function part_sats numbers a part never seen
 * before; livefix.state.prn is not duplicated here), memoised by value (a dict) and by identity of
 * read-only field mappings (_gsvcore_store.c), both cleared past MEMO_MAX entries as in Python.
 */
#include "_gsvcore.h"
#include "../_corekit.h"

static PyObject *S_GET, *S_SIGNAL, *S_NUMMSG, *S_MSGNUM, *S_NUMSV, *EMPTY_STR;
static PyObject *BLOCK[16];  /* svid_01, elv_01, az_01, cno_01, svid_02, ... (gsv._BLOCK_FLAT) */
PyObject *gsv_empty_tuple;

static void set_unknown(Asm *s, PyObject *v)
{
    if (s->last_unknown == v) return;
    PyObject *old = s->last_unknown;
    s->last_unknown = Py_NewRef(v);
    Py_XDECREF(old);
}

/* ---- reading a field mapping ---- */

/* f.get(name) or f.get(name, dflt), d = kit_plain_dict(f) (livefix/_corekit.h); a new reference */
static PyObject *field(PyObject *d, PyObject *f, PyObject *name, PyObject *dflt)
{
    return kit_field(d, f, name, dflt, S_GET);
}

/* gsv.GsvAssembler._part: satellites of one part (+ numbers no block fits), memoised by value and
 * by identity; a new reference to a (satellites, unknown numbers) pair of tuples */
static PyObject *part_of(Asm *s, PyObject *talker, PyObject *f, PyObject *d, PyObject *key, int num,
                         int part, PyObject *total)
{
    PyObject *system = PyDict_GetItemWithError(s->systems, talker), *vkey = NULL, *hit = NULL;
    if (system == NULL && PyErr_Occurred()) return NULL;
    system = Py_NewRef(system != NULL ? system : Py_None);
    PyObject *vals = PyTuple_New(16);
    if (vals == NULL) goto done;
    for (int i = 0; i < 16; i++) {
        PyObject *v = field(d, f, BLOCK[i], NULL);
        if (v == NULL) goto done;
        PyTuple_SET_ITEM(vals, i, v);
    }
    if ((vkey = PyTuple_Pack(2, system, vals)) == NULL) goto done;
    hit = PyDict_GetItemWithError(s->by_value, vkey);
    if (hit != NULL) {
        Py_INCREF(hit);
    } else {
        if (PyErr_Occurred()) goto done;
        if ((hit = PyObject_CallFunctionObjArgs(s->part_sats, system, vals, NULL)) == NULL) goto done;
        if (!PyTuple_CheckExact(hit) || PyTuple_GET_SIZE(hit) != 2 || !PyTuple_CheckExact(PyTuple_GET_ITEM(hit, 0))
            || !PyTuple_CheckExact(PyTuple_GET_ITEM(hit, 1))) {
            PyErr_SetString(PyExc_TypeError, "part_sats must return a pair of tuples");
            Py_CLEAR(hit);
            goto done;
        }
        if (PyDict_GET_SIZE(s->by_value) >= MEMO_MAX) PyDict_Clear(s->by_value);
        if (PyDict_SetItem(s->by_value, vkey, hit) < 0) Py_CLEAR(hit);
    }
    /* read-only, so its results never change; holding f keeps its address unique */
    if (hit != NULL && Py_IS_TYPE(f, &PyDictProxy_Type) && gsv_memo_put(s, f, key, num, part, total, hit) < 0)
        Py_CLEAR(hit);
done:
    Py_DECREF(system);
    Py_XDECREF(vals);
    Py_XDECREF(vkey);
    return hit;
}

/* ---- add(): gsv.GsvAssembler.add, branch for branch ---- */

PyObject *gsv_add(Asm *s, PyObject *talker, PyObject *f)
{
    PyObject *key = NULL, *total = NULL, *hit = NULL, *num_o = NULL, *part_o = NULL, *d = NULL, *res = NULL;
    PyObject *out_key = NULL, *out_sats = NULL, *done_key = NULL, *done_sats = NULL;
    Partial *own = NULL, *p;
    int out_n = 0, done_n = 0, valid = 1, r;
    long num = 0, part = 0;
    Memo *m = memo_find(s, f);
    if (m != NULL) {  /* the decoder's shared value of a repeated line */
        key = Py_NewRef(m->key);
        total = Py_NewRef(m->total);
        hit = Py_NewRef(m->hit);
        num = m->num;
        part = m->part;
    } else {
        d = kit_plain_dict(f);
        PyObject *sid = field(d, f, S_SIGNAL, EMPTY_STR);
        if (sid != NULL && !PyUnicode_CheckExact(sid)) Py_SETREF(sid, PyObject_Str(sid));
        if (sid == NULL) goto fail;
        key = PyTuple_Pack(2, talker, sid);
        Py_DECREF(sid);
        if (key == NULL || (num_o = field(d, f, S_NUMMSG, NULL)) == NULL
            || (part_o = field(d, f, S_MSGNUM, NULL)) == NULL || (total = field(d, f, S_NUMSV, NULL)) == NULL)
            goto fail;
        int o1 = 1, o2 = 1;
        valid = PyLong_CheckExact(num_o) && PyLong_CheckExact(part_o);
        if (valid) {
            num = PyLong_AsLongAndOverflow(num_o, &o1);
            part = PyLong_AsLongAndOverflow(part_o, &o2);
            valid = !o1 && !o2 && 1 <= part && part <= num && num <= MAX_PARTS;
        }
    }
    set_unknown(s, gsv_empty_tuple);
    if (m == NULL && PyObject_Hash(key) == -1) goto fail;  /* as the Python dict lookup would */
    if ((r = gsv_pending_find(s, key)) == -2) goto fail;
    p = r >= 0 ? s->pending[r] : NULL;
    if (!valid) {
        if (p != NULL) p->missing = 1;  /* unreadable part numbers: this talker's set lost a part */
        s->broken++;
        res = gsv_result(key, NULL, 1);
        goto end;
    }
    if (hit == NULL && (hit = part_of(s, talker, f, d, key, (int)num, (int)part, total)) == NULL) goto fail;
    PyObject *sats = PyTuple_GET_ITEM(hit, 0), *unknown = PyTuple_GET_ITEM(hit, 1);
    if (PyTuple_GET_SIZE(unknown)) {
        s->unmapped += PyTuple_GET_SIZE(unknown);
        set_unknown(s, unknown);
    }
    int same_num = p != NULL && p->num_msg == num;
    if (same_num && p->next_msg == part) {
        /* the next part of this talker's set */
    } else {
        int repeat = 0;
        if (same_num && part < p->next_msg) {
            repeat = part > 1 ? 1 : p->parts[0] != NULL ? op_bool(p->parts[0], sats, Py_EQ) : 0;
            if (repeat < 0) goto fail;
        }
        if (repeat) {  /* a repeated part: the later copy stands, not a new set */
            Py_XSETREF(p->parts[part - 1], Py_NewRef(sats));
            res = gsv_result(key, NULL, 0);
            goto end;
        }
        Partial *q = NULL;
        if (part != 1 && !same_num && gsv_waiting_for(s, key, num, part, total, &q) < 0) goto fail;
        if (q != NULL) {
            p = q;  /* the set continues under another talker */
        } else if (part != 1 && same_num) {
            p->missing = 1;  /* parts between went missing */
        } else {
            if (part != 1 && p == NULL) {  /* a part of the set just completed, sent again? */
                if ((r = gsv_repeats_last(s, key, num, part, sats)) < 0) goto fail;
                if (r) {
                    res = gsv_result(key, NULL, 0);
                    goto end;
                }
            }
            if (p != NULL) {  /* a new set begins: the unfinished one ends incomplete */
                r = gsv_end_set(s, p, &out_key, &out_sats, &out_n);
                gsv_partial_free(p);
                if (r < 0) goto fail;
            }
            if ((own = p = gsv_partial_new(key, (int)num, total, part != 1)) == NULL) goto fail;
        }
    }
    Py_XSETREF(p->parts[part - 1], Py_NewRef(sats));
    p->next_msg = (int)part + 1;
    if (part == num) {
        if ((r = gsv_pending_find(s, p->key)) == -2) goto fail;
        if (r >= 0) {
            Partial *x = gsv_pending_take(s, r);
            if (x != p) gsv_partial_free(x);
        }
        if (own == p) own = NULL;
        r = gsv_end_set(s, p, &done_key, &done_sats, &done_n);
        gsv_partial_free(p);
        if (r < 0) goto fail;
        if (done_sats != NULL || out_sats == NULL)  /* the newer set wins */
            res = gsv_result(done_key, done_sats, out_n + done_n);
        else
            res = gsv_result(out_key, out_sats, out_n + done_n);
        goto end;
    }
    if (gsv_pending_index(s, p) < 0) {
        if (s->npending >= MAX_GROUPS) {  /* the oldest unfinished set is dropped */
            s->broken++;
            gsv_partial_free(gsv_pending_take(s, 0));
        }
        if ((r = gsv_pending_find(s, p->key)) == -2) goto fail;
        if (r >= 0) {
            Partial *x = s->pending[r];
            s->pending[r] = p;
            gsv_partial_free(x);
        } else {
            s->pending[s->npending++] = p;
        }
        if (own == p) own = NULL;
    }
    res = gsv_result(out_key != NULL ? out_key : key, out_sats, out_n);
    goto end;
fail:
    res = NULL;
end:
    gsv_partial_free(own);
    Py_XDECREF(key);
    Py_XDECREF(total);
    Py_XDECREF(hit);
    Py_XDECREF(num_o);
    Py_XDECREF(part_o);
    Py_XDECREF(out_key);
    Py_XDECREF(out_sats);
    Py_XDECREF(done_key);
    Py_XDECREF(done_sats);
    return res;
}

int gsv_add_init(void)
{
    static const char *kinds[4] = {"svid", "elv", "az", "cno"};
    char name[16];
    for (int i = 0; i < 16; i++) {
        snprintf(name, sizeof name, "%s_%02d", kinds[i % 4], i / 4 + 1);
        if ((BLOCK[i] = PyUnicode_InternFromString(name)) == NULL) return -1;
    }
    if ((S_GET = PyUnicode_InternFromString("get")) == NULL
        || (S_SIGNAL = PyUnicode_InternFromString("signalID")) == NULL
        || (S_NUMMSG = PyUnicode_InternFromString("numMsg")) == NULL
        || (S_MSGNUM = PyUnicode_InternFromString("msgNum")) == NULL
        || (S_NUMSV = PyUnicode_InternFromString("numSV")) == NULL
        || (EMPTY_STR = PyUnicode_FromString("")) == NULL || (gsv_empty_tuple = PyTuple_New(0)) == NULL)
        return -1;
    return 0;
}
