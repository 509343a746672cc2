/* livefix.state._usedcore: add_gsa() (used.UsedTracker.add_gsa, step for step) and its memos: the
 * classification memo by value (a dict, cleared past BY_VALUE_MAX) and by identity of read-only
 * field mappings (an open-addressing table keyed by the mapping's address, holding the mapping so
 * the address stays unique; cleared past BY_ID_MAX); and note_unknown(), the labels of listed
 * numbers no block fits. A GSA never seen before goes to used.classify (livefix.state.prn is not
 * duplicated here).
 */
#include "_usedcore.h"
#include "../_corekit.h"

static PyObject *S_GET, *S_SYSID, *S_GSA, *S_SPACE, *EMPTY_STR;
static PyObject *S_PARTS[3]; /* placed, open, unknown: the attributes of a used.GsaSentence */
static PyObject *SVID[12]; /* svid_01 .. svid_12 (used._SVIDS) */

/* ---- the memo by identity: open addressing on the mapping's address, load <= 1/2 ---- */

static inline size_t memo_slot(const void *f, size_t mask)
{
    size_t h = (size_t)((uintptr_t)f >> 4) * (size_t)0x9E3779B97F4A7C15ULL;
    return (h ^ (h >> 29)) & mask;
}

static Memo *memo_find(Tracker *s, PyObject *f)
{
    if (s->memo == NULL) return NULL;
    size_t mask = s->memo_cap - 1;
    for (size_t i = memo_slot(f, mask);; i = (i + 1) & mask) {
        if (s->memo[i].f == f) return &s->memo[i];
        if (s->memo[i].f == NULL) return NULL;
    }
}

void used_memo_clear(Tracker *s) /* detach first: a destructor run by a release sees an empty memo */
{
    Memo *old = s->memo;
    size_t cap = s->memo_cap;
    s->memo = NULL;
    s->memo_cap = s->memo_len = 0;
    for (size_t i = 0; old != NULL && i < cap; i++) {
        if (old[i].f == NULL) continue;
        Py_DECREF(old[i].f);
        Py_DECREF(old[i].g);
    }
    PyMem_Free(old);
}

static int memo_put(Tracker *s, PyObject *f, PyObject *g) /* f is not in the memo */
{
    if (s->memo_len >= BY_ID_MAX) used_memo_clear(s); /* as the Python dict: full means start over */
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
    while (s->memo[i].f != NULL) i = (i + 1) & mask;
    s->memo[i] = (Memo){Py_NewRef(f), Py_NewRef(g)};
    s->memo_len++;
    return 0;
}

/* ---- reading a field mapping ---- */

/* f.get(name) or f.get(name, dflt), d = kit_plain_dict(f) (livefix/_corekit.h); a new reference */
static PyObject *field(PyObject *d, PyObject *f, PyObject *name, PyObject *dflt)
{
    return kit_field(d, f, name, dflt, S_GET);
}

/* ---- note_unknown(): used.UsedTracker.note_unknown ---- */

static PyObject *label(PyObject *source, PyObject *n) /* f"{source} {n}" */
{
    PyObject *a = PyObject_Format(source, NULL), *b = a != NULL ? PyObject_Format(n, NULL) : NULL, *r = NULL;
    if (b != NULL) {
        PyObject *parts[3] = {a, S_SPACE, b}, *t = PyTuple_New(3);
        for (int i = 0; t != NULL && i < 3; i++) PyTuple_SET_ITEM(t, i, Py_NewRef(parts[i]));
        r = t != NULL ? PyUnicode_Join(EMPTY_STR, t) : NULL;
        Py_XDECREF(t);
    }
    Py_XDECREF(a);
    Py_XDECREF(b);
    return r;
}

int used_note_unknown(Tracker *s, PyObject *source, PyObject *nums)
{
    Py_ssize_t n = PyObject_Size(nums);
    if (n < 0) return -1;
    s->unknown_total += n;
    PyObject *it = PyObject_GetIter(nums), *x;
    if (it == NULL) return -1;
    while ((x = PyIter_Next(it)) != NULL) {
        if (s->nlabels < MAX_UNKNOWN) {
            PyObject *l = label(source, x);
            if (l == NULL) {
                Py_DECREF(x);
                Py_DECREF(it);
                return -1;
            }
            s->labels[s->nlabels++] = l;
        }
        Py_DECREF(x);
    }
    Py_DECREF(it);
    return PyErr_Occurred() ? -1 : 0;
}

int used_note_gsa(Tracker *s, PyObject *talker, PyObject *nums) /* note_unknown(talker + "GSA", nums) */
{
    PyObject *source = PyNumber_Add(talker, S_GSA);
    int r = source != NULL ? used_note_unknown(s, source, nums) : -1;
    Py_XDECREF(source);
    return r;
}

/* ---- add_gsa(): used.UsedTracker.add_gsa, step for step ---- */

/* used.classify(sid, talker, svids) as (placed, open, unknown); a new reference */
static PyObject *classified(Tracker *s, PyObject *sid, PyObject *talker, PyObject *svids)
{
    PyObject *g = PyObject_CallFunctionObjArgs(s->classify, sid, talker, svids, NULL), *out = NULL;
    if (g == NULL || (out = PyTuple_New(3)) == NULL) goto done;
    for (int i = 0; i < 3; i++) {
        PyObject *v = PyObject_GetAttr(g, S_PARTS[i]);  /* interned: no new name per call */
        if (v == NULL) {
            Py_CLEAR(out);
            goto done;
        }
        PyTuple_SET_ITEM(out, i, v);
        if (!PyTuple_CheckExact(v)) {
            PyErr_SetString(PyExc_TypeError, "classify must give placed, open and unknown tuples");
            Py_CLEAR(out);
            goto done;
        }
    }
done:
    Py_XDECREF(g);
    return out;
}

PyObject *used_add(Tracker *s, PyObject *talker, PyObject *f)
{
    PyObject *g, *sid = NULL, *svids = NULL, *key = NULL;
    s->seen_gsa = 1;
    Memo *m = memo_find(s, f);
    if (m != NULL) { /* the decoder's shared value of a repeated line */
        g = Py_NewRef(m->g);
    } else {
        PyObject *d = kit_plain_dict(f);
        g = NULL;
        if ((sid = field(d, f, S_SYSID, EMPTY_STR)) == NULL || (svids = PyTuple_New(12)) == NULL) goto done;
        for (int i = 0; i < 12; i++) {
            PyObject *v = field(d, f, SVID[i], NULL);
            if (v == NULL) goto done;
            PyTuple_SET_ITEM(svids, i, v);
        }
        if ((key = PyTuple_Pack(3, sid, talker, svids)) == NULL) goto done;
        g = PyDict_GetItemWithError(s->by_value, key);
        if (g != NULL) {
            Py_INCREF(g);
        } else {
            if (PyErr_Occurred() || (g = classified(s, sid, talker, svids)) == NULL) goto done;
            if (PyDict_GET_SIZE(s->by_value) >= BY_VALUE_MAX) PyDict_Clear(s->by_value);
            if (PyDict_SetItem(s->by_value, key, g) < 0) Py_CLEAR(g);
        }
        /* read-only: same line, same talker, same result; holding f keeps its address unique */
        if (g != NULL && Py_IS_TYPE(f, &PyDictProxy_Type) && memo_put(s, f, g) < 0) Py_CLEAR(g);
    }
done:
    Py_XDECREF(sid);
    Py_XDECREF(svids);
    Py_XDECREF(key);
    if (g == NULL) return NULL;
    PyObject *open = PyTuple_GET_ITEM(g, 1), *unknown = PyTuple_GET_ITEM(g, 2), *out = NULL;
    if (PyTuple_GET_SIZE(open)) {
        if (s->nopen == s->open_cap) {
            Py_ssize_t cap = s->open_cap ? 2 * s->open_cap : 8;  /* a flood of lines in one epoch: bounded by memory */
            Open *t = (size_t)cap <= PY_SSIZE_T_MAX / sizeof(Open) ? PyMem_Realloc(s->open, (size_t)cap * sizeof(Open))
                                                                   : NULL;
            if (t == NULL) {
                PyErr_NoMemory();
                goto end;
            }
            s->open = t;
            s->open_cap = cap;
        }
        s->open[s->nopen++] = (Open){Py_NewRef(talker), Py_NewRef(open)};
    }
    if (PyTuple_GET_SIZE(unknown) && used_note_gsa(s, talker, unknown) < 0) goto end;
    out = Py_NewRef(PyTuple_GET_ITEM(g, 0));
end:
    Py_DECREF(g);
    return out;
}

int used_add_init(void)
{
    char name[24];
    for (int i = 0; i < 12; i++) {
        snprintf(name, sizeof name, "svid_%02d", i + 1);
        if ((SVID[i] = PyUnicode_InternFromString(name)) == NULL) return -1;
    }
    if ((S_GET = PyUnicode_InternFromString("get")) == NULL
        || (S_SYSID = PyUnicode_InternFromString("systemId")) == NULL
        || (S_PARTS[0] = PyUnicode_InternFromString("placed")) == NULL
        || (S_PARTS[1] = PyUnicode_InternFromString("open")) == NULL
        || (S_PARTS[2] = PyUnicode_InternFromString("unknown")) == NULL
        || (S_GSA = PyUnicode_FromString("GSA")) == NULL || (S_SPACE = PyUnicode_FromString(" ")) == NULL
        || (EMPTY_STR = PyUnicode_FromString("")) == NULL)
        return -1;
    return 0;
}
