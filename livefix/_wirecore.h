/* livefix._wirecore: the declarations its two source files share (private to the module): the
 * value tags and record kinds of the packed wire, and the slotted classes' shapes. _wirecore.c has
 * the overview, the shapes, the front's Packer and the module; _wirecore_read.c the child's Reader.
 */
#ifndef LIVEFIX_WIRECORE_H
#define LIVEFIX_WIRECORE_H

#define PY_SSIZE_T_CLEAN
#include <Python.h>
#include <stdint.h>
#include <string.h>
#include <structmember.h>

#define WIRE_VERSION 1 /* livefix/parallel.py checks it: a stale build falls back to pickling */
#define MAX_DEPTH 8
#define MAX_SLOTS 64
#define WINDOW 4 /* how far ahead in the previous tuple an element is looked for first */

enum { V_NONE, V_FLOAT, V_INT, V_STR, V_TRUE, V_FALSE, V_OTHER, V_TUPLE, V_SAME, V_PREV, V_ITEM };
/* record kinds: the first three are livefix.wire.CHUNK, REJECTED, EVENT with their arguments */
enum { R_CHUNK, R_REJECTED, R_EVENT, R_EPOCH, R_OTHER };
#if defined(__GNUC__) && !defined(_WIN32)
#define WIRE_HIDDEN __attribute__((visibility("hidden")))
#else
#define WIRE_HIDDEN
#endif

/* the arguments of each (kind, args...) record: on_chunk(mono, wall, nbytes), on_rejected(reason,
 * mono, wall), on_event(ev) */
static const Py_ssize_t NARGS[3] = {3, 3, 1};

/* ---- the slotted classes (Epoch, SatObs): type and slot offsets, checked once ---- */
typedef struct {
    PyTypeObject *tp; /* owned */
    Py_ssize_t n, off[MAX_SLOTS];
} Shape;

#define SLOT(obj, sh, i) (*(PyObject **)((char *)(obj) + (sh)->off[i]))

WIRE_HIDDEN int shape_of(PyObject *slots, Shape *sh);
WIRE_HIDDEN PyObject *shape_new(Shape *sh, PyObject **vals);
WIRE_HIDDEN extern PyTypeObject ReaderType, PackerType;

#endif
