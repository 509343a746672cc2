/* livefix.state._gsvcore: the GSV set assembler of livefix/state/gsv.py (GsvAssembler) in C.
 *
 * Why: GSV lines are the most frequent sentences of a multi-constellation receiver (several sets of
 * several parts per epoch), and the Python assembler spends about a microsecond per line even when
 * the line was seen before. The pure-Python class stays the reference: this twin takes the same
 * branches in the same order, keeps the same memos with the same caps and clearing, and hands back
 * the very same list object while a set repeats (livefix.state.sky skips work by that identity).
 * tests/state/test_gsv_native.py compares every add() of the two. The satellite numbering
 * (livefix.state.prn) is not duplicated: a part never seen before goes to the Python function
 * passed in (gsv._part_sats).
 *
 * What is held: the parts of unfinished sets (at most MAX_GROUPS, each at most MAX_PARTS parts),
 * the last complete set per group (a dict, cleared past MAX_GROUPS), the part memo by value (a
 * dict) and by identity of read-only field mappings (an open-addressing table keyed by the
 * mapping's address, holding the mapping so the address stays unique); both memos clear past
 * MEMO_MAX entries, as in the Python class.
 */
#define PY_SSIZE_T_CLEAN
#include <Python.h>
#include <structmember.h>
#include <stdint.h>
#include <string.h>

#define MAX_PARTS 99   /* livefix.state.gsv.MAX_PARTS */
#define MEMO_MAX 4096  /* livefix.state.gsv.MEMO_MAX */
#define MAX_GROUPS 64  /* livefix.state.gsv.GsvAssembler.MAX_GROUPS */

static PyObject *S_GET, *S_SIGNAL, *S_NUMMSG, *S_MSGNUM, *S_NUMSV, *EMPTY_STR, *EMPTY_TUPLE;
static PyObject *BLOCK[16];  /* svid_01, elv_01, az_01, cno_01, svid_02, ... (gsv._BLOCK_FLAT) */

typedef struct {
    PyObject *key, *total;  /* (talker, signal) of its first part; numSV of its first part */
    int num_msg, next_msg, missing;
    PyObject *parts[];      /* num_msg entries: satellites per part, NULL until it arrived */
} Partial;

typedef struct { PyObject *f, *key, *total, *hit; int num, part; } Memo;

typedef struct {
    PyObject_HEAD
    Py_ssize_t broken, unmapped;
    PyObject *last_unknown;
    PyObject *part_sats, *systems, *by_value, *last;  /* last: key -> (parts tuple, satellites list) */
    Partial *pending[MAX_GROUPS];                     /* in insertion order, like the Python dict */
    int npending, busy;
    Memo *memo;
    size_t memo_cap, memo_len;
} Asm;

/* ---- small helpers ---- */

static Partial *partial_new(PyObject *key, int num, PyObject *total, int missing)
{
    Partial *p = PyMem_Calloc(1, sizeof(Partial) + (size_t)num * sizeof(PyObject *));
    if (p == NULL) {
        PyErr_NoMemory();
        return NULL;
    }
    p->key = Py_NewRef(key);
    p->total = Py_NewRef(total);
    p->num_msg = num;
    p->next_msg = 1;
    p->missing = missing;
    return p;
}

static void partial_free(Partial *p)  /* p is detached from every table before this */
{
    if (p == NULL) return;
    for (int i = 0; i < p->num_msg; i++) Py_XDECREF(p->parts[i]);
    Py_DECREF(p->key);
    Py_DECREF(p->total);
    PyMem_Free(p);
}

/* a == b as list items and dict keys compare (identity first); -1 on error */
static int eq_bool(PyObject *a, PyObject *b)
{
    if (a == b) return 1;
    if (PyUnicode_CheckExact(a) && PyUnicode_CheckExact(b)) return PyUnicode_Compare(a, b) == 0;
    return PyObject_RichCompareBool(a, b, Py_EQ);
}

/* the truth of Python's `a == b` / `a != b` (no identity shortcut); -1 on error */
static int op_bool(PyObject *a, PyObject *b, int op)
{
    if (PyUnicode_CheckExact(a) && PyUnicode_CheckExact(b)) {
        int same = PyUnicode_Compare(a, b) == 0;
        return op == Py_EQ ? same : !same;
    }
    PyObject *r = PyObject_RichCompare(a, b, op);
    if (r == NULL) return -1;
    int t = PyObject_IsTrue(r);
    Py_DECREF(r);
    return t;
}

static int key_eq(PyObject *a, PyObject *b)  /* group keys are (talker, signal) tuples */
{
    if (a == b) return 1;
    if (PyTuple_GET_SIZE(a) == 2 && PyTuple_GET_SIZE(b) == 2) {
        int r = eq_bool(PyTuple_GET_ITEM(a, 0), PyTuple_GET_ITEM(b, 0));
        return r == 1 ? eq_bool(PyTuple_GET_ITEM(a, 1), PyTuple_GET_ITEM(b, 1)) : r;
    }
    return PyObject_RichCompareBool(a, b, Py_EQ);
}

static void set_unknown(Asm *s, PyObject *v)
{
    if (s->last_unknown == v) return;
    PyObject *old = s->last_unknown;
    s->last_unknown = Py_NewRef(v);
    Py_XDECREF(old);
}

/* ---- unfinished sets, in insertion order ---- */

static int pending_find(Asm *s, PyObject *key)  /* index, -1 when absent, -2 on error */
{
    for (int i = 0; i < s->npending; i++) {
        int r = key_eq(s->pending[i]->key, key);
        if (r) return r < 0 ? -2 : i;
    }
    return -1;
}

static int pending_index(Asm *s, Partial *p)
{
    for (int i = 0; i < s->npending; i++)
        if (s->pending[i] == p) return i;
    return -1;
}

static Partial *pending_take(Asm *s, int i)
{
    Partial *p = s->pending[i];
    memmove(&s->pending[i], &s->pending[i + 1], (size_t)(s->npending - i - 1) * sizeof(Partial *));
    s->npending--;
    return p;
}

/* ---- the part memo by identity: open addressing on the mapping's address, load <= 1/2 ---- */

static inline size_t memo_slot(const void *f, size_t mask)
{
    size_t h = (size_t)((uintptr_t)f >> 4) * (size_t)0x9E3779B97F4A7C15ULL;
    return (h ^ (h >> 29)) & mask;
}

static Memo *memo_find(Asm *s, PyObject *f)
{
    if (s->memo == NULL) return NULL;
    size_t mask = s->memo_cap - 1;
    for (size_t i = memo_slot(f, mask);; i = (i + 1) & mask) {
        if (s->memo[i].f == f) return &s->memo[i];
        if (s->memo[i].f == NULL) return NULL;
    }
}

static void memo_clear(Asm *s)  /* detach first: a destructor run by a release sees an empty memo */
{
    Memo *old = s->memo;
    size_t cap = s->memo_cap;
    s->memo = NULL;
    s->memo_cap = s->memo_len = 0;
    for (size_t i = 0; old != NULL && i < cap; i++) {
        if (old[i].f == NULL) continue;
        Py_DECREF(old[i].f);
        Py_DECREF(old[i].key);
        Py_DECREF(old[i].total);
        Py_DECREF(old[i].hit);
    }
    PyMem_Free(old);
}

static int memo_put(Asm *s, PyObject *f, PyObject *key, int num, int part, PyObject *total, PyObject *hit)
{
    if (s->memo_len >= MEMO_MAX) memo_clear(s);  /* as the Python dict: full means start over */
    if (s->memo == NULL || 2 * (s->memo_len + 1) > s->memo_cap) {
        size_t cap = s->memo_cap ? 2 * s->memo_cap : 64;
        Memo *t = PyMem_Calloc(cap, sizeof(Memo));
        if (t == NULL) {
            PyErr_NoMemory();
            return -1;
        }
        for (size_t i = 0; i < s->memo_cap; i++) {
            if (s->memo[i].f == NULL) continue;
            size_t j = memo_slot(s->memo[i].f, cap - 1);
            while (t[j].f != NULL) j = (j + 1) & (cap - 1);
            t[j] = s->memo[i];
        }
        PyMem_Free(s->memo);
        s->memo = t;
        s->memo_cap = cap;
    }
    size_t mask = s->memo_cap - 1, i = memo_slot(f, mask);
    while (s->memo[i].f != NULL && s->memo[i].f != f) i = (i + 1) & mask;
    Memo *m = &s->memo[i], old = *m;
    *m = (Memo){Py_NewRef(f), Py_NewRef(key), Py_NewRef(total), Py_NewRef(hit), num, part};
    if (old.f == NULL) {
        s->memo_len++;
    } else {
        Py_DECREF(old.f);
        Py_DECREF(old.key);
        Py_DECREF(old.total);
        Py_DECREF(old.hit);
    }
    return 0;
}

/* ---- reading a field mapping ---- */

typedef struct { PyObject *first; int n; } Seen;

static int seen_visit(PyObject *o, void *arg)
{
    Seen *seen = arg;
    if (seen->n++ == 0) seen->first = o;
    return 0;
}

/* The plain dict f reads from when f is one or a read-only view (MappingProxyType) of one, else
 * NULL. Why: the decoder hands out views of plain dicts, whose get() costs two method calls per
 * field. A view's only reference is its mapping (what its tp_traverse visits), and a view's get()
 * is its dict's get(), so reading the dict gives the same values. Anything else: its own get(). */
static PyObject *plain_dict(PyObject *f)
{
    if (PyDict_CheckExact(f)) return f;
    if (!Py_IS_TYPE(f, &PyDictProxy_Type) || Py_TYPE(f)->tp_traverse == NULL) return NULL;
    Seen seen = {NULL, 0};
    Py_TYPE(f)->tp_traverse(f, seen_visit, &seen);
    return seen.n == 1 && PyDict_CheckExact(seen.first) ? seen.first : NULL;
}

/* f.get(name) or f.get(name, dflt) (dflt NULL: no default given); a new reference */
static PyObject *field(PyObject *d, PyObject *f, PyObject *name, PyObject *dflt)
{
    if (d != NULL) {
        PyObject *v = PyDict_GetItemWithError(d, name);
        if (v == NULL && PyErr_Occurred()) return NULL;
        return Py_NewRef(v != NULL ? v : dflt != NULL ? dflt : Py_None);
    }
    PyObject *args[3] = {f, name, dflt};
    return PyObject_VectorcallMethod(S_GET, args, dflt != NULL ? 3 : 2, NULL);
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
    if (hit != NULL && Py_IS_TYPE(f, &PyDictProxy_Type) && memo_put(s, f, key, num, part, total, hit) < 0)
        Py_CLEAR(hit);
done:
    Py_DECREF(system);
    Py_XDECREF(vals);
    Py_XDECREF(vkey);
    return hit;
}

/* ---- set completion ---- */

static PyObject *flatten(Partial *p)  /* every satellite of the parts that arrived, in part order */
{
    Py_ssize_t n = 0, k = 0;
    for (int i = 0; i < p->num_msg; i++)
        if (p->parts[i] != NULL) n += PyTuple_GET_SIZE(p->parts[i]);
    PyObject *out = PyList_New(n);
    for (int i = 0; out != NULL && i < p->num_msg; i++)
        for (Py_ssize_t j = 0; p->parts[i] != NULL && j < PyTuple_GET_SIZE(p->parts[i]); j++)
            PyList_SET_ITEM(out, k++, Py_NewRef(PyTuple_GET_ITEM(p->parts[i], j)));
    return out;
}

static PyObject *sat_id(PyObject *sat)  /* (s[0], s[1]) */
{
    if (PyTuple_Check(sat) && PyTuple_GET_SIZE(sat) >= 2)
        return PyTuple_Pack(2, PyTuple_GET_ITEM(sat, 0), PyTuple_GET_ITEM(sat, 1));
    PyObject *a = PySequence_GetItem(sat, 0), *b = a ? PySequence_GetItem(sat, 1) : NULL;
    PyObject *r = b ? PyTuple_Pack(2, a, b) : NULL;
    Py_XDECREF(a);
    Py_XDECREF(b);
    return r;
}

/* a set that lost a part: add the previous set's satellites not listed now when their number is
 * exactly what the satellites-in-view total says is missing (gsv.GsvAssembler._end) */
static int carry_over(PyObject *got, PyObject *prev, PyObject *total)
{
    PyObject *have = PySet_New(NULL), *carried = PyList_New(0), *seq = PySequence_Fast(prev, "a list");
    int rc = -1;
    if (have == NULL || carried == NULL || seq == NULL) goto done;
    for (Py_ssize_t i = 0; i < PyList_GET_SIZE(got); i++) {
        PyObject *id = sat_id(PyList_GET_ITEM(got, i));
        int r = id ? PySet_Add(have, id) : -1;
        Py_XDECREF(id);
        if (r < 0) goto done;
    }
    for (Py_ssize_t i = 0; i < PySequence_Fast_GET_SIZE(seq); i++) {
        PyObject *sat = PySequence_Fast_GET_ITEM(seq, i), *id = sat_id(sat);
        int r = id ? PySet_Contains(have, id) : -1;
        Py_XDECREF(id);
        if (r < 0 || (r == 0 && PyList_Append(carried, sat) < 0)) goto done;
    }
    int overflow;
    long long want = PyLong_AsLongLongAndOverflow(total, &overflow);
    Py_ssize_t n = PyList_GET_SIZE(got), c = PyList_GET_SIZE(carried);
    if (c && !overflow && want == (long long)(n + c) && PyList_SetSlice(got, n, n, carried) < 0) goto done;
    rc = 0;
done:
    Py_XDECREF(have);
    Py_XDECREF(carried);
    Py_XDECREF(seq);
    return rc;
}

/* gsv.GsvAssembler._end: publish a set that ended. Detaches p from the pending sets; the caller
 * frees it. *sats is NULL for None. */
static int end_set(Asm *s, Partial *p, PyObject **key, PyObject **sats, int *n)
{
    int i = pending_index(s, p), whole = !p->missing;
    if (i >= 0) pending_take(s, i);
    *sats = NULL;
    *n = 0;
    PyObject *last = PyDict_GetItemWithError(s->last, p->key), *got = NULL;
    if (last == NULL && PyErr_Occurred()) return -1;
    Py_XINCREF(last);  /* the dict may be cleared below */
    for (i = 0; i < p->num_msg; i++)
        if (p->parts[i] == NULL) whole = 0;
    if (whole) {
        if (last != NULL) {  /* the same parts: the same set as last time */
            PyObject *lp = PyTuple_GET_ITEM(last, 0);
            int same = PyTuple_GET_SIZE(lp) == p->num_msg;
            for (i = 0; same == 1 && i < p->num_msg; i++) same = eq_bool(PyTuple_GET_ITEM(lp, i), p->parts[i]);
            if (same < 0) goto fail;
            if (same) {
                *sats = Py_NewRef(PyTuple_GET_ITEM(last, 1));
                goto ok;
            }
        }
        if ((got = flatten(p)) == NULL) goto fail;
        int same = last != NULL ? op_bool(PyTuple_GET_ITEM(last, 1), got, Py_EQ) : 0;
        if (same < 0) goto fail;
        if (same) {  /* same satellites, split differently: the same list */
            Py_SETREF(got, Py_NewRef(PyTuple_GET_ITEM(last, 1)));
        } else if (PyDict_GET_SIZE(s->last) >= MAX_GROUPS) {
            PyDict_Clear(s->last);
        }
        PyObject *parts = PyTuple_New(p->num_msg), *pair = NULL;
        for (i = 0; parts != NULL && i < p->num_msg; i++) PyTuple_SET_ITEM(parts, i, Py_NewRef(p->parts[i]));
        if (parts != NULL) pair = PyTuple_Pack(2, parts, got);
        Py_XDECREF(parts);
        int r = pair != NULL ? PyDict_SetItem(s->last, p->key, pair) : -1;
        Py_XDECREF(pair);
        if (r < 0) goto fail;
        *sats = got;
        goto ok;
    }
    s->broken++;
    if ((got = flatten(p)) == NULL) goto fail;
    if (last != NULL && PyLong_CheckExact(p->total) && carry_over(got, PyTuple_GET_ITEM(last, 1), p->total) < 0)
        goto fail;
    if (PyList_GET_SIZE(got)) *sats = got;
    else Py_DECREF(got);
    *n = 1;
ok:
    Py_XDECREF(last);
    *key = Py_NewRef(p->key);
    return 0;
fail:
    Py_XDECREF(last);
    Py_XDECREF(got);
    return -1;
}

/* gsv.GsvAssembler._waiting_for: the most recent set of another talker expecting exactly this part */
static int waiting_for(Asm *s, PyObject *key, long num, long part, PyObject *total, Partial **found)
{
    *found = NULL;
    for (int i = 0; i < s->npending; i++) {
        Partial *q = s->pending[i];
        if (q->next_msg != part || q->num_msg != num) continue;
        int r = op_bool(q->total, total, Py_EQ);
        if (r == 1) r = op_bool(PyTuple_GET_ITEM(q->key, 1), PyTuple_GET_ITEM(key, 1), Py_EQ);
        if (r == 1) r = op_bool(PyTuple_GET_ITEM(q->key, 0), PyTuple_GET_ITEM(key, 0), Py_NE);
        if (r < 0) return -1;
        if (r) *found = q;
    }
    return 0;
}

static int repeats_last(Asm *s, PyObject *key, long num, long part, PyObject *sats)
{
    PyObject *last = PyDict_GetItemWithError(s->last, key);
    if (last == NULL) return PyErr_Occurred() ? -1 : 0;
    PyObject *parts = PyTuple_GET_ITEM(last, 0);
    if (PyTuple_GET_SIZE(parts) != num) return 0;
    Py_INCREF(last);
    int r = op_bool(PyTuple_GET_ITEM(parts, part - 1), sats, Py_EQ);
    Py_DECREF(last);
    return r;
}

static PyObject *result(PyObject *key, PyObject *sats, int n)
{
    PyObject *k = PyLong_FromLong(n), *r = k ? PyTuple_Pack(3, key, sats ? sats : Py_None, k) : NULL;
    Py_XDECREF(k);
    return r;
}

/* ---- add(): gsv.GsvAssembler.add, branch for branch ---- */

static PyObject *add_impl(Asm *s, PyObject *talker, PyObject *f)
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
        d = plain_dict(f);
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
    set_unknown(s, EMPTY_TUPLE);
    if (m == NULL && PyObject_Hash(key) == -1) goto fail;  /* as the Python dict lookup would */
    if ((r = pending_find(s, key)) == -2) goto fail;
    p = r >= 0 ? s->pending[r] : NULL;
    if (!valid) {
        if (p != NULL) p->missing = 1;  /* unreadable part numbers: this talker's set lost a part */
        s->broken++;
        res = result(key, NULL, 1);
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
            res = result(key, NULL, 0);
            goto end;
        }
        Partial *q = NULL;
        if (part != 1 && !same_num && waiting_for(s, key, num, part, total, &q) < 0) goto fail;
        if (q != NULL) {
            p = q;  /* the set continues under another talker */
        } else if (part != 1 && same_num) {
            p->missing = 1;  /* parts between went missing */
        } else {
            if (part != 1 && p == NULL) {  /* a part of the set just completed, sent again? */
                if ((r = repeats_last(s, key, num, part, sats)) < 0) goto fail;
                if (r) {
                    res = result(key, NULL, 0);
                    goto end;
                }
            }
            if (p != NULL) {  /* a new set begins: the unfinished one ends incomplete */
                r = end_set(s, p, &out_key, &out_sats, &out_n);
                partial_free(p);
                if (r < 0) goto fail;
            }
            if ((own = p = partial_new(key, (int)num, total, part != 1)) == NULL) goto fail;
        }
    }
    Py_XSETREF(p->parts[part - 1], Py_NewRef(sats));
    p->next_msg = (int)part + 1;
    if (part == num) {
        if ((r = pending_find(s, p->key)) == -2) goto fail;
        if (r >= 0) {
            Partial *x = pending_take(s, r);
            if (x != p) partial_free(x);
        }
        if (own == p) own = NULL;
        r = end_set(s, p, &done_key, &done_sats, &done_n);
        partial_free(p);
        if (r < 0) goto fail;
        if (done_sats != NULL || out_sats == NULL)  /* the newer set wins */
            res = result(done_key, done_sats, out_n + done_n);
        else
            res = result(out_key, out_sats, out_n + done_n);
        goto end;
    }
    if (pending_index(s, p) < 0) {
        if (s->npending >= MAX_GROUPS) {  /* the oldest unfinished set is dropped */
            s->broken++;
            partial_free(pending_take(s, 0));
        }
        if ((r = pending_find(s, p->key)) == -2) goto fail;
        if (r >= 0) {
            Partial *x = s->pending[r];
            s->pending[r] = p;
            partial_free(x);
        } else {
            s->pending[s->npending++] = p;
        }
        if (own == p) own = NULL;
    }
    res = result(out_key != NULL ? out_key : key, out_sats, out_n);
    goto end;
fail:
    res = NULL;
end:
    partial_free(own);
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

PyDoc_STRVAR(add_doc,
"add(talker, fields) -> (group key, satellites of a set that ended now or None, incomplete sets counted now)");

static PyObject *asm_add(Asm *s, PyObject *const *args, Py_ssize_t nargs)
{
    if (nargs != 2) {
        PyErr_Format(PyExc_TypeError, "add() takes 2 arguments (%zd given)", nargs);
        return NULL;
    }
    if (s->busy || s->last == NULL) {  /* a comparison or get() calling back in; or after tp_clear */
        PyErr_SetString(PyExc_RuntimeError, s->busy ? "GsvAssembler.add() called re-entrantly"
                                                    : "GsvAssembler.add() on a cleared assembler");
        return NULL;
    }
    s->busy = 1;
    PyObject *r = add_impl(s, args[0], args[1]);
    s->busy = 0;
    return r;
}

/* ---- the type ---- */

static int asm_traverse(Asm *s, visitproc visit, void *arg)
{
    Py_VISIT(s->last_unknown);
    Py_VISIT(s->part_sats);
    Py_VISIT(s->systems);
    Py_VISIT(s->by_value);
    Py_VISIT(s->last);
    for (int i = 0; i < s->npending; i++) {
        Partial *p = s->pending[i];
        Py_VISIT(p->key);
        Py_VISIT(p->total);
        for (int k = 0; k < p->num_msg; k++) Py_VISIT(p->parts[k]);
    }
    for (size_t i = 0; s->memo != NULL && i < s->memo_cap; i++) {
        if (s->memo[i].f == NULL) continue;
        Py_VISIT(s->memo[i].f);
        Py_VISIT(s->memo[i].key);
        Py_VISIT(s->memo[i].total);
        Py_VISIT(s->memo[i].hit);
    }
    return 0;
}

static int asm_clear(Asm *s)
{
    while (s->npending > 0) partial_free(pending_take(s, s->npending - 1));
    memo_clear(s);
    Py_CLEAR(s->last_unknown);
    Py_CLEAR(s->part_sats);
    Py_CLEAR(s->systems);
    Py_CLEAR(s->by_value);
    Py_CLEAR(s->last);
    return 0;
}

static void asm_dealloc(Asm *s)
{
    PyObject_GC_UnTrack(s);
    asm_clear(s);
    Py_TYPE(s)->tp_free((PyObject *)s);
}

static PyObject *asm_new(PyTypeObject *type, PyObject *args, PyObject *kwds)
{
    static char *names[] = {"part_sats", "talker_system", NULL};
    PyObject *part_sats, *systems;
    if (!PyArg_ParseTupleAndKeywords(args, kwds, "OO!:GsvAssembler", names, &part_sats, &PyDict_Type, &systems))
        return NULL;
    if (!PyCallable_Check(part_sats)) {
        PyErr_SetString(PyExc_TypeError, "GsvAssembler: part_sats must be callable");
        return NULL;
    }
    Asm *s = (Asm *)type->tp_alloc(type, 0);
    if (s == NULL) return NULL;
    s->last_unknown = Py_NewRef(EMPTY_TUPLE);
    s->part_sats = Py_NewRef(part_sats);
    s->systems = Py_NewRef(systems);
    if ((s->by_value = PyDict_New()) == NULL || (s->last = PyDict_New()) == NULL) {
        Py_DECREF(s);
        return NULL;
    }
    return (PyObject *)s;
}

static PyObject *asm_pending(Asm *s, void *closure)
{
    (void)closure;
    PyObject *out = PyDict_New();
    for (int i = 0; out != NULL && i < s->npending; i++) {
        Partial *p = s->pending[i];
        PyObject *v = Py_BuildValue("(iii)", p->num_msg, p->next_msg, p->missing);
        if (v == NULL || PyDict_SetItem(out, p->key, v) < 0) Py_CLEAR(out);
        Py_XDECREF(v);
    }
    return out;
}

static PyMethodDef asm_methods[] = {
    {"add", (PyCFunction)(void (*)(void))asm_add, METH_FASTCALL, add_doc},
    {NULL, NULL, 0, NULL}};

static PyMemberDef asm_members[] = {
    {"broken", T_PYSSIZET, offsetof(Asm, broken), 0, "incomplete sets + unreadable parts"},
    {"unmapped", T_PYSSIZET, offsetof(Asm, unmapped), 0, "listed numbers outside every known block"},
    {"last_unknown", T_OBJECT, offsetof(Asm, last_unknown), READONLY, "such numbers in the part just added"},
    {NULL, 0, 0, 0, NULL}};

static PyGetSetDef asm_getset[] = {
    {"_pending", (getter)asm_pending, NULL, "unfinished sets: {key: (numMsg, next part, missing)}, a copy", NULL},
    {NULL, NULL, NULL, NULL, NULL}};

PyDoc_STRVAR(asm_doc,
"GsvAssembler(part_sats, talker_system)\n\n"
"The C twin of livefix.state.gsv.GsvAssembler (use livefix.state.gsv.make_assembler()): the same\n"
"add() results, counters and list identities. part_sats is gsv._part_sats, talker_system\n"
"livefix.state.epoch.TALKER_SYSTEM.");

static PyTypeObject AsmType = {
    PyVarObject_HEAD_INIT(NULL, 0)
    .tp_name = "livefix.state._gsvcore.GsvAssembler",
    .tp_basicsize = sizeof(Asm),
    .tp_flags = Py_TPFLAGS_DEFAULT | Py_TPFLAGS_HAVE_GC,
    .tp_doc = asm_doc,
    .tp_new = asm_new,
    .tp_dealloc = (destructor)asm_dealloc,
    .tp_traverse = (traverseproc)asm_traverse,
    .tp_clear = (inquiry)asm_clear,
    .tp_methods = asm_methods,
    .tp_members = asm_members,
    .tp_getset = asm_getset,
};

static struct PyModuleDef MODULE = {PyModuleDef_HEAD_INIT, "livefix.state._gsvcore",
                                    "GSV set assembly in C (see livefix/state/gsv.py).", -1, NULL,
                                    NULL, NULL, NULL, NULL};

PyMODINIT_FUNC PyInit__gsvcore(void)
{
    static const char *kinds[4] = {"svid", "elv", "az", "cno"};
    char name[16];
    for (int i = 0; i < 16; i++) {
        snprintf(name, sizeof name, "%s_%02d", kinds[i % 4], i / 4 + 1);
        if ((BLOCK[i] = PyUnicode_InternFromString(name)) == NULL) return NULL;
    }
    if ((S_GET = PyUnicode_InternFromString("get")) == NULL
        || (S_SIGNAL = PyUnicode_InternFromString("signalID")) == NULL
        || (S_NUMMSG = PyUnicode_InternFromString("numMsg")) == NULL
        || (S_MSGNUM = PyUnicode_InternFromString("msgNum")) == NULL
        || (S_NUMSV = PyUnicode_InternFromString("numSV")) == NULL
        || (EMPTY_STR = PyUnicode_FromString("")) == NULL || (EMPTY_TUPLE = PyTuple_New(0)) == NULL)
        return NULL;
    if (PyType_Ready(&AsmType) < 0) return NULL;
    PyObject *groups = PyLong_FromLong(MAX_GROUPS);
    int bad = groups == NULL || PyDict_SetItemString(AsmType.tp_dict, "MAX_GROUPS", groups) < 0;
    Py_XDECREF(groups);
    if (bad) return NULL;
    PyType_Modified(&AsmType);
    PyObject *mod = PyModule_Create(&MODULE);
    if (mod == NULL) return NULL;
    if (PyModule_AddObjectRef(mod, "GsvAssembler", (PyObject *)&AsmType) < 0
        || PyModule_AddIntConstant(mod, "MAX_PARTS", MAX_PARTS) < 0
        || PyModule_AddIntConstant(mod, "MEMO_MAX", MEMO_MAX) < 0
        || PyModule_AddIntConstant(mod, "MAX_GROUPS", MAX_GROUPS) < 0) {
        Py_DECREF(mod);
        return NULL;
    }
    return mod;
}
