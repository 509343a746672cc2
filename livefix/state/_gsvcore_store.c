/* livefix.state._gsvcore: what the assembler holds between lines. The parts of unfinished sets (at
 * most MAX_GROUPS, each at most MAX_PARTS parts, in insertion order like the Python dict) and the
 * part memo by identity of read-only field mappings: an open-addressing table keyed by the
 * mapping's address, holding the mapping so the address stays unique, cleared past MEMO_MAX
 * entries as the Python class clears its dict.
 */
#include "_gsvcore.h"
#include <stdint.h>
#include <string.h>

/* ---- a set's parts ---- */

Partial *gsv_partial_new(PyObject *key, int num, PyObject *total, int missing)
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

void gsv_partial_free(Partial *p)  /* p is detached from every table before this */
{
    if (p == NULL) return;
    for (int i = 0; i < p->num_msg; i++) Py_XDECREF(p->parts[i]);
    Py_DECREF(p->key);
    Py_DECREF(p->total);
    PyMem_Free(p);
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

/* ---- unfinished sets, in insertion order ---- */

int gsv_pending_find(Asm *s, PyObject *key)  /* index, -1 when absent, -2 on error */
{
    for (int i = 0; i < s->npending; i++) {
        int r = key_eq(s->pending[i]->key, key);
        if (r) return r < 0 ? -2 : i;
    }
    return -1;
}

int gsv_pending_index(Asm *s, Partial *p)
{
    for (int i = 0; i < s->npending; i++)
        if (s->pending[i] == p) return i;
    return -1;
}

Partial *gsv_pending_take(Asm *s, int i)
{
    Partial *p = s->pending[i];
    memmove(&s->pending[i], &s->pending[i + 1], (size_t)(s->npending - i - 1) * sizeof(Partial *));
    s->npending--;
    return p;
}

/* ---- the part memo by identity: open addressing on the mapping's address, load <= 1/2 ---- */

void gsv_memo_clear(Asm *s)  /* detach first: a destructor run by a release sees an empty memo */
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

int gsv_memo_put(Asm *s, PyObject *f, PyObject *key, int num, int part, PyObject *total, PyObject *hit)
{
    if (s->memo_len >= MEMO_MAX) gsv_memo_clear(s);  /* as the Python dict: full means start over */
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
