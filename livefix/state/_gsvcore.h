/* livefix.state._gsvcore: the declarations its source files share (private to the module).
 *
 * The module is built from _gsvcore.c (the GsvAssembler type and the module), _gsvcore_add.c
 * (add(): reading a part, the per-part memos, the branches of gsv.GsvAssembler.add),
 * _gsvcore_sets.c (ending a set) and _gsvcore_store.c (the unfinished sets and the identity memo
 * table). Everything shared between them has the gsv_ prefix (or is a type or a static inline
 * helper) and hidden visibility, so the extension exports nothing but its init function.
 */
#ifndef LIVEFIX_GSVCORE_H
#define LIVEFIX_GSVCORE_H

#define PY_SSIZE_T_CLEAN
#include <Python.h>
#include <stdint.h>

#if defined(__GNUC__) && !defined(_WIN32)
#define GSV_HIDDEN __attribute__((visibility("hidden")))
#else
#define GSV_HIDDEN
#endif

#define MAX_PARTS 99   /* livefix.state.gsv.MAX_PARTS */
#define MEMO_MAX 4096  /* livefix.state.gsv.MEMO_MAX */
#define MAX_GROUPS 64  /* livefix.state.gsv.GsvAssembler.MAX_GROUPS */

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

/* a == b as list items and dict keys compare (identity first); -1 on error */
static inline int eq_bool(PyObject *a, PyObject *b)
{
    if (a == b) return 1;
    if (PyUnicode_CheckExact(a) && PyUnicode_CheckExact(b)) return PyUnicode_Compare(a, b) == 0;
    return PyObject_RichCompareBool(a, b, Py_EQ);
}

/* the truth of Python's `a == b` / `a != b` (no identity shortcut); -1 on error */
static inline int op_bool(PyObject *a, PyObject *b, int op)
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

/* the part memo by identity: open addressing on the mapping's address, load <= 1/2 (the lookup
 * runs once per line, so it is inline here; _gsvcore_store.c fills and clears the table) */
static inline size_t memo_slot(const void *f, size_t mask)
{
    size_t h = (size_t)((uintptr_t)f >> 4) * (size_t)0x9E3779B97F4A7C15ULL;
    return (h ^ (h >> 29)) & mask;
}

static inline Memo *memo_find(Asm *s, PyObject *f)
{
    if (s->memo == NULL) return NULL;
    size_t mask = s->memo_cap - 1;
    for (size_t i = memo_slot(f, mask);; i = (i + 1) & mask) {
        if (s->memo[i].f == f) return &s->memo[i];
        if (s->memo[i].f == NULL) return NULL;
    }
}

/* _gsvcore_store.c: unfinished sets (in insertion order) and the part memo by identity */
GSV_HIDDEN Partial *gsv_partial_new(PyObject *key, int num, PyObject *total, int missing);
GSV_HIDDEN void gsv_partial_free(Partial *p);
GSV_HIDDEN int gsv_pending_find(Asm *s, PyObject *key);
GSV_HIDDEN int gsv_pending_index(Asm *s, Partial *p);
GSV_HIDDEN Partial *gsv_pending_take(Asm *s, int i);
GSV_HIDDEN void gsv_memo_clear(Asm *s);
GSV_HIDDEN int gsv_memo_put(Asm *s, PyObject *f, PyObject *key, int num, int part, PyObject *total, PyObject *hit);

/* _gsvcore_sets.c: ending a set */
GSV_HIDDEN int gsv_end_set(Asm *s, Partial *p, PyObject **key, PyObject **sats, int *n);
GSV_HIDDEN int gsv_waiting_for(Asm *s, PyObject *key, long num, long part, PyObject *total, Partial **found);
GSV_HIDDEN int gsv_repeats_last(Asm *s, PyObject *key, long num, long part, PyObject *sats);
GSV_HIDDEN PyObject *gsv_result(PyObject *key, PyObject *sats, int n);

/* _gsvcore_add.c */
GSV_HIDDEN extern PyObject *gsv_empty_tuple;  /* () */
GSV_HIDDEN int gsv_add_init(void);            /* interned field names: once, from the module init */
GSV_HIDDEN PyObject *gsv_add(Asm *s, PyObject *talker, PyObject *f);
/* _gsvcore_parts.c: the module function part_sats (gsv._part_sats with prn.user_prn) */
GSV_HIDDEN int gsv_parts_add(PyObject *mod);

#endif
