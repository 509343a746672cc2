/* livefix._native: LinePump, the C twin of livefix.pipeline.Pipeline._lines: decode each line, hand a
 * Decoded to the state model and each epoch it completes to the analysis (events first), a Rejected
 * to the model, the analysis and the pipeline's list of recent refusals. The same calls with the
 * same arguments in the same order; exceptions propagate as in the Python loop.
 *
 * One shortcut: Pipeline._pump_events is skipped when it would do nothing, i.e. when the pipeline is
 * a plain Pipeline, the model's drain_events is StateModel.drain_events and the model's _events
 * list is empty (what drain_events hands out). The only difference is that the model keeps its
 * empty list instead of a fresh empty one.
 */
#include "_native_front.h"

static PyObject *S_decoder, *S_decode, *S_state, *S_on_sentence, *S_analyzer, *S_on_epoch, *S_pump_events,
    *S_drain_events, *S_events, *S_on_rejected, *S_reason, *S_raw, *S_rejects, *S_colon, *S_upto90;

enum { P_PIPELINE, P_PUMP, P_DRAIN, P_REJECTED, NHELP };

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

static PyObject *pump_new(PyTypeObject *type, PyObject *args, PyObject *kwds)
{
    static char *names[] = {"pipeline", "helpers", NULL};
    PyObject *pipe, *helpers;
    if (!PyArg_ParseTupleAndKeywords(args, kwds, "OO!:LinePump", names, &pipe, &PyTuple_Type, &helpers)) return NULL;
    if (PyTuple_GET_SIZE(helpers) != NHELP || !PyType_Check(PyTuple_GET_ITEM(helpers, P_PIPELINE))
        || !PyType_Check(PyTuple_GET_ITEM(helpers, P_REJECTED))) {
        PyErr_Format(PyExc_TypeError, "LinePump: %d helpers (Pipeline, its _pump_events, drain_events, Rejected)",
                     NHELP);
        return NULL;
    }
    Pump *s = (Pump *)type->tp_alloc(type, 0);
    if (s == NULL) return NULL;
    for (int i = 0; i < NHELP; i++) s->h[i] = Py_NewRef(PyTuple_GET_ITEM(helpers, i));
    s->pipe = Py_NewRef(pipe);
    /* the shortcut's own condition: the reference _pump_events as the class has it */
    if (_PyType_Lookup((PyTypeObject *)s->h[P_PIPELINE], S_pump_events) != s->h[P_PUMP]) {
        PyErr_SetString(PyExc_TypeError, "LinePump: helper 1 must be the Pipeline's own _pump_events");
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
#undef IN
    PyObject *ninety = PyLong_FromLong(90);
    if (ninety == NULL) return -1;
    S_upto90 = PySlice_New(Py_None, ninety, Py_None);
    Py_DECREF(ninety);
    if (S_upto90 == NULL || PyType_Ready(&PumpType) < 0) return -1;
    return PyModule_AddObjectRef(mod, "LinePump", (PyObject *)&PumpType);
}
