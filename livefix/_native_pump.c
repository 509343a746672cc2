/* livefix._native: LinePump, the C twin of livefix.pipeline.Pipeline._lines: decode each line, hand a
 * Decoded to the state model and each epoch it completes to the analysis (events first), a Rejected
 * to the model, the analysis and the pipeline's list of recent refusals. The same calls with the
 * same arguments in the same order; exceptions propagate as in the Python loop.
 *
 * And of Pipeline.feed for a Chunk (feed(); any other item goes to Pipeline.feed itself): the
 * pipeline's stream time, the analysis' on_chunk, the model's on_chunk, the framer, the lines and the
 * events, as there. Two more shortcuts of the same kind as the one below, each taken only when the
 * object is exactly the class whose method it stands for: StateModel.on_chunk is its two attribute
 * writes, and Framer.feed's plain-block branch (empty buffer, outside a sentence, a CRLF-ended chunk,
 * this module's split_block) is that split and the two counter updates; anything else calls the
 * method. Why: the per-chunk Python glue was about 1 us of each 10 Hz epoch.
 *
 * One shortcut: Pipeline._pump_events is skipped when it would do nothing, i.e. when the pipeline is
 * a plain Pipeline, the model's drain_events is StateModel.drain_events and the model's _events
 * list is empty (what drain_events hands out). The only difference is that the model keeps its
 * empty list instead of a fresh empty one.
 */
#include "_native_front.h"

static PyObject *S_decoder, *S_decode, *S_state, *S_on_sentence, *S_analyzer, *S_on_epoch, *S_pump_events,
    *S_drain_events, *S_events, *S_on_rejected, *S_reason, *S_raw, *S_rejects, *S_colon, *S_upto90, *S_mono,
    *S_wall, *S_data, *S_pmono, *S_pwall, *S_on_chunk, *S_framer, *S_feed, *S_plines, *S_buf, *S_fstate,
    *S_split, *S_max_len, *S_counters, *S_bytes, *S_lines;

enum { P_PIPELINE, P_PUMP, P_DRAIN, P_REJECTED, P_FEED, P_CHUNK, P_ON_CHUNK, P_FRAMER, P_FRAMER_FEED, NHELP };

typedef struct {
    PyObject_HEAD
    PyObject *pipe, *h[NHELP];
} Pump;

/* 1 when self._pump_events() would drain nothing (see the top), 0 when it must be called, -1 error */
static int nothing_pending(Pump *s, PyObject *pdict)
{
    if (pdict == NULL || Py_TYPE(s->pipe) != (PyTypeObject *)s->h[P_PIPELINE] || !PyDict_CheckExact(pdict))
        return 0;
    if (PyDict_GetItemWithError(pdict, S_pump_events) != NULL) return 0;  /* set on the instance */
    if (PyErr_Occurred()) return -1;
    PyObject *state = PyDict_GetItemWithError(pdict, S_state);
    if (state == NULL) return PyErr_Occurred() ? -1 : 0;
    if (_PyType_Lookup(Py_TYPE(state), S_drain_events) != s->h[P_DRAIN]) return 0;
    PyObject **sdp = _PyObject_GetDictPtr(state);
    if (sdp == NULL || *sdp == NULL || !PyDict_CheckExact(*sdp)) return 0;
    if (PyDict_GetItemWithError(*sdp, S_drain_events) != NULL) return 0;  /* set on the instance */
    if (PyErr_Occurred()) return -1;
    PyObject *ev = PyDict_GetItemWithError(*sdp, S_events);
    if (PyErr_Occurred()) return -1;
    return ev != NULL && PyList_CheckExact(ev) && PyList_GET_SIZE(ev) == 0;
}

/* the reference's else branch for a Rejected msg */
static int rejected(Pump *s, PyObject *msg, PyObject *mono, PyObject *wall)
{
    PyObject *o = PyObject_GetAttr(s->pipe, S_state), *r = NULL, *text = NULL, *x = NULL;
    if (o == NULL) return -1;
    {
        PyObject *args[4] = {o, msg, mono, wall};
        r = PyObject_VectorcallMethod(S_on_rejected, args, 4 | PY_VECTORCALL_ARGUMENTS_OFFSET, NULL);
    }
    Py_DECREF(o);
    if (r == NULL || (o = PyObject_GetAttr(s->pipe, S_analyzer)) == NULL) goto fail;
    Py_CLEAR(r);
    if ((x = PyObject_GetAttr(msg, S_reason)) == NULL) goto fail;  /* checksum-burst timing */
    {
        PyObject *args[4] = {o, x, mono, wall};
        r = PyObject_VectorcallMethod(S_on_rejected, args, 4 | PY_VECTORCALL_ARGUMENTS_OFFSET, NULL);
    }
    Py_CLEAR(o);
    Py_CLEAR(x);
    if (r == NULL || (o = PyObject_GetAttr(s->pipe, S_rejects)) == NULL) goto fail;
    Py_CLEAR(r);
    Py_ssize_t n = PyObject_Length(o);
    if (n < 0 || (n >= 8 && PySequence_DelItem(o, 0) < 0)) goto fail;
    Py_CLEAR(o);
    if ((o = PyObject_GetAttr(s->pipe, S_rejects)) == NULL) goto fail;
    /* f"{msg.reason}: {msg.raw[:90]!r}" */
    PyObject *reason = PyObject_GetAttr(msg, S_reason), *head = NULL, *raw = NULL, *cut = NULL, *rep = NULL;
    if (reason != NULL) head = PyObject_Format(reason, NULL);
    if (head != NULL) raw = PyObject_GetAttr(msg, S_raw);
    if (raw != NULL) cut = PyObject_GetItem(raw, S_upto90);
    if (cut != NULL) rep = PyObject_Repr(cut);
    if (rep != NULL) text = PyUnicode_FromFormat("%U%U%U", head, S_colon, rep);
    Py_XDECREF(reason);
    Py_XDECREF(head);
    Py_XDECREF(raw);
    Py_XDECREF(cut);
    Py_XDECREF(rep);
    if (text == NULL) goto fail;
    if (PyList_CheckExact(o)) {
        if (PyList_Append(o, text) < 0) goto fail;
    } else if ((r = PyObject_CallMethod(o, "append", "O", text)) == NULL) {
        goto fail;
    }
    Py_XDECREF(r);
    Py_DECREF(text);
    Py_DECREF(o);
    return 0;
fail:
    Py_XDECREF(o);
    Py_XDECREF(r);
    Py_XDECREF(x);
    Py_XDECREF(text);
    return -1;
}

/* for ep in eps: self._pump_events(); on_epoch(ep) */
static int epochs(Pump *s, PyObject *eps, PyObject *on_epoch)
{
    if (PyTuple_CheckExact(eps) && PyTuple_GET_SIZE(eps) == 0) return 0;  /* the usual shared () */
    PyObject *it = PyObject_GetIter(eps), *ep;
    if (it == NULL) return -1;
    while ((ep = PyIter_Next(it)) != NULL) {
        PyObject **pdp = _PyObject_GetDictPtr(s->pipe);
        int idle = nothing_pending(s, pdp == NULL ? NULL : *pdp), rc = idle;
        if (idle == 0) {
            PyObject *r = PyObject_CallMethodNoArgs(s->pipe, S_pump_events);
            rc = r == NULL ? -1 : 0;
            Py_XDECREF(r);
        }
        if (rc >= 0) {
            PyObject *r = PyObject_CallOneArg(on_epoch, ep);
            rc = r == NULL ? -1 : 0;
            Py_XDECREF(r);
        }
        Py_DECREF(ep);
        if (rc < 0) break;
    }
    Py_DECREF(it);
    return PyErr_Occurred() ? -1 : 0;
}

static PyObject *pump_lines(Pump *s, PyObject *const *args, Py_ssize_t nargs)
{
    if (nargs != 3) {
        PyErr_SetString(PyExc_TypeError, "lines(lines, mono, wall)");
        return NULL;
    }
    PyObject *lines = args[0], *mono = args[1], *wall = args[2];
    PyObject *decode = NULL, *on_sentence = NULL, *on_epoch = NULL, *o, *it = NULL, *line;
    if ((o = PyObject_GetAttr(s->pipe, S_decoder)) == NULL) return NULL;
    decode = PyObject_GetAttr(o, S_decode);
    Py_DECREF(o);
    if (decode == NULL || (o = PyObject_GetAttr(s->pipe, S_state)) == NULL) goto fail;
    on_sentence = PyObject_GetAttr(o, S_on_sentence);
    Py_DECREF(o);
    if (on_sentence == NULL || (o = PyObject_GetAttr(s->pipe, S_analyzer)) == NULL) goto fail;
    on_epoch = PyObject_GetAttr(o, S_on_epoch);
    Py_DECREF(o);
    if (on_epoch == NULL || (it = PyObject_GetIter(lines)) == NULL) goto fail;
    /* the decoder's C twin: call it without the bound-method round trip */
    PyObject *front = PyCFunction_Check(decode) && PyCFunction_GET_FUNCTION(decode) == nat_front_decode
                              && Py_IS_TYPE(PyCFunction_GET_SELF(decode), &nat_front_type)
                          ? PyCFunction_GET_SELF(decode)
                          : NULL;
    while ((line = PyIter_Next(it)) != NULL) {
        PyObject *msg = front != NULL ? nat_front_decode(front, line) : PyObject_CallOneArg(decode, line);
        Py_DECREF(line);
        if (msg == NULL) goto fail;
        int rc;
        if ((PyObject *)Py_TYPE(msg) != s->h[P_REJECTED]) {
            PyObject *cargs[3] = {msg, mono, wall};
            PyObject *eps = PyObject_Vectorcall(on_sentence, cargs, 3, NULL);
            rc = eps == NULL ? -1 : epochs(s, eps, on_epoch);
            Py_XDECREF(eps);
        } else {
            rc = rejected(s, msg, mono, wall);
        }
        Py_DECREF(msg);
        if (rc < 0) goto fail;
    }
    if (PyErr_Occurred()) goto fail;
    Py_DECREF(it);
    Py_DECREF(decode);
    Py_DECREF(on_sentence);
    Py_DECREF(on_epoch);
    Py_RETURN_NONE;
fail:
    Py_XDECREF(it);
    Py_XDECREF(decode);
    Py_XDECREF(on_sentence);
    Py_XDECREF(on_epoch);
    return NULL;
}

/* 1 when o's class gives `name` as the function fn and o's own dict does not override it */
static int plain_method(PyObject *o, PyObject *name, PyObject *fn)
{
    if (_PyType_Lookup(Py_TYPE(o), name) != fn) return 0;
    PyObject **dp = _PyObject_GetDictPtr(o);
    if (dp == NULL || *dp == NULL) return 1;
    PyObject *own = PyDict_GetItemWithError(*dp, name);
    if (own == NULL && PyErr_Occurred()) PyErr_Clear();
    return own == NULL;
}

/* c.name += k for a counter attribute (as the reference's `c.bytes += ...`): 0, -1 with an error */
static int bump_attr(PyObject *c, PyObject *name, Py_ssize_t k)
{
    PyObject *old = PyObject_GetAttr(c, name), *add = old == NULL ? NULL : PyLong_FromSsize_t(k), *nv = NULL;
    if (add != NULL) nv = PyNumber_InPlaceAdd(old, add);
    int rc = nv == NULL ? -1 : PyObject_SetAttr(c, name, nv);
    Py_XDECREF(old);
    Py_XDECREF(add);
    Py_XDECREF(nv);
    return rc;
}

/* Framer.feed(data)'s first branch when its conditions hold (see the top): the lines (a new reference);
 * NULL with no error when the branch is not taken here (nothing changed: the caller calls the method) */
static PyObject *framer_fast(Pump *s, PyObject *fr, PyObject *data)
{
    if (!Py_IS_TYPE(fr, (PyTypeObject *)s->h[P_FRAMER]) || !PyBytes_CheckExact(data)
        || !plain_method(fr, S_feed, s->h[P_FRAMER_FEED]))
        return NULL;
    Py_ssize_t n = PyBytes_GET_SIZE(data), max_len = -1;
    const char *d = PyBytes_AS_STRING(data);
    if (n < 2 || d[n - 2] != '\r' || d[n - 1] != '\n') return NULL;
    PyObject *buf = PyObject_GetAttr(fr, S_buf), *st = NULL, *split = NULL, *ml = NULL, *lines = NULL;
    int ok = buf != NULL && PyByteArray_CheckExact(buf) && PyByteArray_GET_SIZE(buf) == 0
             && (st = PyObject_GetAttr(fr, S_fstate)) != NULL && PyLong_CheckExact(st) && PyLong_AsLong(st) == 0
             && (split = PyObject_GetAttr(fr, S_split)) != NULL && PyCFunction_Check(split)
             && PyCFunction_GET_FUNCTION(split) == nat_split_block && (ml = PyObject_GetAttr(fr, S_max_len)) != NULL
             && PyLong_CheckExact(ml) && (max_len = PyLong_AsSsize_t(ml)) >= 0;
    Py_XDECREF(buf);
    Py_XDECREF(st);
    Py_XDECREF(split);
    Py_XDECREF(ml);
    if (!ok) {
        PyErr_Clear(); /* an odd attribute: the method meets it itself */
        return NULL;
    }
    if ((lines = nat_split(data, max_len)) == NULL) return NULL;
    if (lines == Py_None) { /* not a plain block: the method's general path (the split is pure) */
        Py_DECREF(lines);
        return NULL;
    }
    PyObject *c = PyObject_GetAttr(fr, S_counters);
    if (c == NULL || bump_attr(c, S_bytes, n) < 0 || bump_attr(c, S_lines, PyList_GET_SIZE(lines)) < 0) Py_CLEAR(lines);
    Py_XDECREF(c);
    return lines;
}

static PyObject *call_method(PyObject *o, PyObject *name, PyObject *const *args, size_t n)
{
    PyObject *a[4] = {o};
    for (size_t k = 0; k < n; k++) a[k + 1] = args[k];
    return PyObject_VectorcallMethod(name, a, (n + 1) | PY_VECTORCALL_ARGUMENTS_OFFSET, NULL);
}

/* Pipeline.feed(item) */
static PyObject *pump_feed(Pump *s, PyObject *item)
{
    if (!Py_IS_TYPE(item, (PyTypeObject *)s->h[P_CHUNK])) {
        PyObject *a[2] = {s->pipe, item};
        return PyObject_Vectorcall(s->h[P_FEED], a, 2, NULL);
    }
    PyObject *mono = PyObject_GetAttr(item, S_mono), *wall = NULL, *data = NULL, *o = NULL, *r = NULL,
             *lines = NULL, *nb = NULL;
    if (mono == NULL || (wall = PyObject_GetAttr(item, S_wall)) == NULL
        || PyObject_SetAttr(s->pipe, S_pmono, mono) < 0 || PyObject_SetAttr(s->pipe, S_pwall, wall) < 0
        || (data = PyObject_GetAttr(item, S_data)) == NULL)
        goto fail;
    Py_ssize_t n = PyObject_Length(data);
    if (n < 0 || (nb = PyLong_FromSsize_t(n)) == NULL || (o = PyObject_GetAttr(s->pipe, S_analyzer)) == NULL)
        goto fail;
    PyObject *ca[3] = {mono, wall, nb};
    if ((r = call_method(o, S_on_chunk, ca, 3)) == NULL) goto fail;
    Py_CLEAR(r);
    Py_CLEAR(o);
    if ((o = PyObject_GetAttr(s->pipe, S_state)) == NULL) goto fail;
    if (plain_method(o, S_on_chunk, s->h[P_ON_CHUNK])) {
        if (PyObject_SetAttr(o, S_pmono, mono) < 0 || PyObject_SetAttr(o, S_pwall, wall) < 0) goto fail;
    } else if ((r = call_method(o, S_on_chunk, ca, 2)) == NULL) {
        goto fail;
    }
    Py_CLEAR(r);
    Py_CLEAR(o);
    if ((o = PyObject_GetAttr(s->pipe, S_framer)) == NULL) goto fail;
    lines = framer_fast(s, o, data);
    if (lines == NULL && (PyErr_Occurred() || (lines = call_method(o, S_feed, &data, 1)) == NULL)) goto fail;
    Py_CLEAR(o);
    int any = PyObject_IsTrue(lines);
    if (any < 0) goto fail;
    if (any) {
        if ((o = PyObject_GetAttr(s->pipe, S_plines)) == NULL) goto fail;
        PyObject *la[3] = {lines, mono, wall};
        if (PyCFunction_Check(o) && PyCFunction_GET_SELF(o) == (PyObject *)s
            && PyCFunction_GET_FUNCTION(o) == (PyCFunction)(void (*)(void))pump_lines)
            r = pump_lines(s, la, 3); /* this pump's own lines(): without the bound-method call */
        else
            r = PyObject_Vectorcall(o, la, 3, NULL);
        if (r == NULL) goto fail;
        Py_CLEAR(r);
        Py_CLEAR(o);
    }
    /* self._pump_events() */
    PyObject **pdp = _PyObject_GetDictPtr(s->pipe);
    int idle = nothing_pending(s, pdp == NULL ? NULL : *pdp);
    if (idle < 0 || (idle == 0 && (r = PyObject_CallMethodNoArgs(s->pipe, S_pump_events)) == NULL)) goto fail;
    Py_XDECREF(r);
    Py_DECREF(mono);
    Py_DECREF(wall);
    Py_DECREF(data);
    Py_DECREF(nb);
    Py_DECREF(lines);
    Py_RETURN_NONE;
fail:
    Py_XDECREF(mono);
    Py_XDECREF(wall);
    Py_XDECREF(data);
    Py_XDECREF(nb);
    Py_XDECREF(o);
    Py_XDECREF(r);
    Py_XDECREF(lines);
    return NULL;
}

static PyObject *pump_new(PyTypeObject *type, PyObject *args, PyObject *kwds)
{
    static char *names[] = {"pipeline", "helpers", NULL};
    PyObject *pipe, *helpers;
    if (!PyArg_ParseTupleAndKeywords(args, kwds, "OO!:LinePump", names, &pipe, &PyTuple_Type, &helpers)) return NULL;
    if (PyTuple_GET_SIZE(helpers) != NHELP || !PyType_Check(PyTuple_GET_ITEM(helpers, P_PIPELINE))
        || !PyType_Check(PyTuple_GET_ITEM(helpers, P_REJECTED)) || !PyType_Check(PyTuple_GET_ITEM(helpers, P_CHUNK))
        || !PyType_Check(PyTuple_GET_ITEM(helpers, P_FRAMER))) {
        PyErr_Format(PyExc_TypeError, "LinePump: %d helpers (Pipeline, its _pump_events, drain_events, Rejected, "
                     "Pipeline.feed, Chunk, StateModel.on_chunk, Framer, Framer.feed)", NHELP);
        return NULL;
    }
    Pump *s = (Pump *)type->tp_alloc(type, 0);
    if (s == NULL) return NULL;
    for (int i = 0; i < NHELP; i++) s->h[i] = Py_NewRef(PyTuple_GET_ITEM(helpers, i));
    s->pipe = Py_NewRef(pipe);
    /* the shortcuts' own conditions: the reference methods as the classes have them */
    if (_PyType_Lookup((PyTypeObject *)s->h[P_PIPELINE], S_pump_events) != s->h[P_PUMP]
        || _PyType_Lookup((PyTypeObject *)s->h[P_PIPELINE], S_feed) != s->h[P_FEED]
        || _PyType_Lookup((PyTypeObject *)s->h[P_FRAMER], S_feed) != s->h[P_FRAMER_FEED]) {
        PyErr_SetString(PyExc_TypeError, "LinePump: helpers 1, 4 and 8 must be the classes' own _pump_events and feed");
        Py_DECREF(s);
        return NULL;
    }
    return (PyObject *)s;
}

static int pump_traverse(Pump *s, visitproc visit, void *arg)
{
    Py_VISIT(s->pipe);
    for (int i = 0; i < NHELP; i++) Py_VISIT(s->h[i]);
    return 0;
}

static int pump_clear(Pump *s)
{
    Py_CLEAR(s->pipe);
    for (int i = 0; i < NHELP; i++) Py_CLEAR(s->h[i]);
    return 0;
}

static void pump_dealloc(Pump *s)
{
    PyObject_GC_UnTrack(s);
    pump_clear(s);
    Py_TYPE(s)->tp_free((PyObject *)s);
}

static PyMethodDef pump_methods[] = {
    {"lines", (PyCFunction)(void (*)(void))pump_lines, METH_FASTCALL,
     "lines(lines, mono, wall) -> None (Pipeline._lines' twin)"},
    {"feed", (PyCFunction)pump_feed, METH_O, "feed(item) -> None (Pipeline.feed's twin)"},
    {NULL, NULL, 0, NULL}};

static PyTypeObject PumpType = {
    PyVarObject_HEAD_INIT(NULL, 0)
    .tp_name = "livefix._native.LinePump",
    .tp_basicsize = sizeof(Pump),
    .tp_flags = Py_TPFLAGS_DEFAULT | Py_TPFLAGS_HAVE_GC,
    .tp_doc = "LinePump(pipeline, helpers): the C twin of Pipeline._lines over the pipeline's attributes\n"
              "(wired in by livefix.pipeline; helpers: Pipeline, Pipeline._pump_events,\n"
              "StateModel.drain_events, Rejected).",
    .tp_new = pump_new,
    .tp_dealloc = (destructor)pump_dealloc,
    .tp_traverse = (traverseproc)pump_traverse,
    .tp_clear = (inquiry)pump_clear,
    .tp_methods = pump_methods,
};

int nat_pump_add(PyObject *mod)
{
#define IN(var, text) if ((var = PyUnicode_InternFromString(text)) == NULL) return -1
    IN(S_decoder, "decoder"); IN(S_decode, "decode"); IN(S_state, "state"); IN(S_on_sentence, "on_sentence");
    IN(S_analyzer, "analyzer"); IN(S_on_epoch, "on_epoch"); IN(S_pump_events, "_pump_events");
    IN(S_drain_events, "drain_events"); IN(S_events, "_events"); IN(S_on_rejected, "on_rejected");
    IN(S_reason, "reason"); IN(S_raw, "raw"); IN(S_rejects, "_rejects"); IN(S_colon, ": ");
    IN(S_mono, "mono"); IN(S_wall, "wall"); IN(S_data, "data"); IN(S_pmono, "_mono"); IN(S_pwall, "_wall");
    IN(S_on_chunk, "on_chunk"); IN(S_framer, "framer"); IN(S_feed, "feed"); IN(S_plines, "_lines");
    IN(S_buf, "_buf"); IN(S_fstate, "_state"); IN(S_split, "_split"); IN(S_max_len, "max_len");
    IN(S_counters, "counters"); IN(S_bytes, "bytes"); IN(S_lines, "lines");
#undef IN
    PyObject *ninety = PyLong_FromLong(90);
    if (ninety == NULL) return -1;
    S_upto90 = PySlice_New(Py_None, ninety, Py_None);
    Py_DECREF(ninety);
    if (S_upto90 == NULL || PyType_Ready(&PumpType) < 0) return -1;
    return PyModule_AddObjectRef(mod, "LinePump", (PyObject *)&PumpType);
}
