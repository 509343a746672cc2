/* livefix.state._usedcore: the declarations its source files share (private to the module).
 *
 * The module is built from _usedcore.c (the UsedTracker type and the module), _usedcore_add.c
 * (add_gsa(), its memos by value and by identity, and note_unknown()) and _usedcore_close.c
 * (close(): placing the open lists against the sky, the used set and the unknown labels). Everything
 * shared between them has the used_ prefix (or is a type) and hidden visibility, so the extension
 * exports nothing but its init function.
 */
#ifndef LIVEFIX_USEDCORE_H
#define LIVEFIX_USEDCORE_H

#define PY_SSIZE_T_CLEAN
#include <Python.h>
#include <stdint.h>

#if defined(__GNUC__) && !defined(_WIN32)
#define USED_HIDDEN __attribute__((visibility("hidden")))
#else
#define USED_HIDDEN
#endif

#define BY_VALUE_MAX 4096 /* livefix.state.used.BY_VALUE_MAX */
#define BY_ID_MAX 1024    /* livefix.state.used.BY_ID_MAX */
#define MAX_UNKNOWN 32    /* livefix.state.used.MAX_UNKNOWN */
#define USED_HOLD_S 5.0   /* livefix.state.used.USED_HOLD_S */

typedef struct { PyObject *f, *g; } Memo;       /* g: (placed, open, unknown), as used.GsaSentence */
typedef struct { PyObject *talker, *nums; } Open; /* an open list waiting for close() */

typedef struct {
    PyObject_HEAD
    Py_ssize_t unknown_total;
    PyObject *unknown, *classify, *place, *by_value, *placed_for, *placed, *last, *last_mono;
    PyObject *labels[MAX_UNKNOWN]; /* "GPGSA 250" labels of the open epoch */
    int nlabels, seen_gsa, busy;
    Open *open;
    Py_ssize_t nopen, open_cap;
    Memo *memo;
    size_t memo_cap, memo_len;
} Tracker;

/* _usedcore_add.c: add_gsa(), its memos, note_unknown() */
USED_HIDDEN int used_add_init(void);          /* interned field names: once, from the module init */
USED_HIDDEN void used_memo_clear(Tracker *s);
USED_HIDDEN int used_note_unknown(Tracker *s, PyObject *source, PyObject *nums);
USED_HIDDEN int used_note_gsa(Tracker *s, PyObject *talker, PyObject *nums);
USED_HIDDEN PyObject *used_add(Tracker *s, PyObject *talker, PyObject *f);

/* _usedcore_close.c: close() */
USED_HIDDEN extern PyObject *used_hold;       /* USED_HOLD_S as a float */
USED_HIDDEN int used_close_init(void);        /* once, from the module init */
USED_HIDDEN void used_open_clear(Tracker *s);
USED_HIDDEN void used_labels_clear(Tracker *s);
USED_HIDDEN PyObject *used_close(Tracker *s, PyObject *used, PyObject *in_view, PyObject *mono);

#endif
