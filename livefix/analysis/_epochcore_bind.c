/* livefix.analysis._epochcore: bind_step(), C steps bound to their stage as its on_epoch: the site
 * record's (_epochcore_site.c, _epochcore_median.c), the fix statistics' (_epochcore_fix.c), the
 * position statistics' (_epochcore_pos.c) and the reflection statistics' first test; the module is in
 * _epochcore.c.
 *
 * Why: a Python on_epoch that only asks the C step costs a frame per stage and epoch, about what a
 * small C step saves. The bound step is a builtin method of the stage (its __qualname__ is
 * the reference's, "StreamIntegrity.on_epoch", as the Analyzer's error notes show it): it runs the C
 * step and, when the step hands back (False, nothing changed), the reference function (the class's own
 * on_epoch, unchanged, given to bind_step) on the stage, so the Python code meets every case it would
 * have met. The site record's stages hold their bound step in their __dict__ (a cycle stage -> step ->
 * stage, freed by the collector when the stage is dropped, like the other cores' bound methods); the
 * others hand it to the Analyzer (their epoch_step()). site_counts() says how many epochs each step
 * did and handed back (the tests' check that the C case runs).
 *
 * The reflection statistics' step is only the reference's first line: `0 <= ep.mono - self._arcs._t <
 * self._sample_s` (the collector would refuse the epoch: nine epochs in ten at 10 Hz) returns at once;
 * for values other than exact floats (and exact ints within 2**53 for the interval), and whenever the
 * test fails, the reference runs and makes the test itself.
 */
#include "_epochcore.h"

enum { K_INTEGRITY, K_MEDIAN, K_FIX, K_POSITION, K_REFLECTION, K_COUNT };
static const char *KINDS[K_COUNT] = {"integrity", "median", "fix", "position", "reflection"};
static PyObject *S_arcs, *S_sample_s;

/* ReflectionStats.on_epoch's first test as a step: True (the epoch is refused by the collector, nothing
 * to do), else False (the reference runs, the test included) */
static PyObject *reflection_step(PyObject *Py_UNUSED(mod), PyObject *const *a, Py_ssize_t Py_UNUSED(nargs))
{
    PyObject *stage = a[0], *ep = a[1], *arcs, *t0 = NULL, *iv;
    if (ep_epoch_type == NULL || Py_TYPE(ep) != ep_epoch_type)
        Py_RETURN_FALSE;
    PyObject *mono = slot(ep, ep_epoch_off[E_MONO]);
    if (mono == NULL || !PyFloat_CheckExact(mono) || (arcs = attr(stage, S_arcs)) == NULL)
        Py_RETURN_FALSE;
    PyObject **dp = _PyObject_GetDictPtr(arcs);
    if (dp != NULL && *dp != NULL && PyDict_CheckExact(*dp) && _PyType_Lookup(Py_TYPE(arcs), ep_s_t) == NULL)
        t0 = PyDict_GetItemWithError(*dp, ep_s_t); /* the collector's _t, where Python finds it */
    double s, d = t0 != NULL && PyFloat_CheckExact(t0) ? PyFloat_AS_DOUBLE(mono) - PyFloat_AS_DOUBLE(t0) : NAN;
    PyErr_Clear();
    Py_DECREF(arcs);
    if (t0 == NULL || isnan(d) || (iv = attr(stage, S_sample_s)) == NULL)
        Py_RETURN_FALSE; /* (a NaN difference fails the test in Python too: the reference says so) */
    int skip = num_of(iv, &s) && 0 <= d && d < s;
    Py_DECREF(iv);
    return Py_NewRef(skip ? Py_True : Py_False);
}
static unsigned long long done_n[K_COUNT], handed_n[K_COUNT];
static PyObject *refs[K_COUNT]; /* the reference of each kind: the class's on_epoch, set by bind_step */

static PyObject *run(int kind, PyObject *stage, PyObject *ep)
{
    static PyObject *(*const steps[K_COUNT])(PyObject *, PyObject *const *, Py_ssize_t) = {
        ep_integrity_epoch, ep_median_epoch, ep_fix_step, ep_position_epoch, reflection_step};
    PyObject *a[2] = {stage, ep}, *r = steps[kind](NULL, a, 2);
    if (r == NULL)
        return NULL;
    int ok = r == Py_True;
    Py_DECREF(r);
    if (ok) {
        done_n[kind] += 1;
        Py_RETURN_NONE;
    }
    handed_n[kind] += 1;
    return PyObject_Vectorcall(refs[kind], a, 2, NULL); /* the reference, on the stage */
}

static PyObject *integrity_bound(PyObject *stage, PyObject *ep) { return run(K_INTEGRITY, stage, ep); }
static PyObject *median_bound(PyObject *stage, PyObject *ep) { return run(K_MEDIAN, stage, ep); }
static PyObject *fix_bound(PyObject *stage, PyObject *ep) { return run(K_FIX, stage, ep); }
static PyObject *position_bound(PyObject *stage, PyObject *ep) { return run(K_POSITION, stage, ep); }
static PyObject *reflection_bound(PyObject *stage, PyObject *ep) { return run(K_REFLECTION, stage, ep); }

#define BOUND_DOC "on_epoch(ep): the C step, or the reference when it hands back (livefix.analysis._epochcore)"
static PyMethodDef BOUND[K_COUNT] = {
    {"on_epoch", integrity_bound, METH_O, BOUND_DOC},
    {"on_epoch", median_bound, METH_O, BOUND_DOC},
    {"on_epoch", fix_bound, METH_O, BOUND_DOC},
    {"on_epoch", position_bound, METH_O, BOUND_DOC},
    {"on_epoch", reflection_bound, METH_O, BOUND_DOC},
};

PyObject *ep_bind_step(PyObject *Py_UNUSED(mod), PyObject *args)
{
    const char *kind;
    PyObject *stage, *ref;
    if (!PyArg_ParseTuple(args, "sOO", &kind, &stage, &ref))
        return NULL;
    if ((S_arcs == NULL && (S_arcs = PyUnicode_InternFromString("_arcs")) == NULL)
        || (S_sample_s == NULL && (S_sample_s = PyUnicode_InternFromString("_sample_s")) == NULL))
        return NULL;
    for (int k = 0; k < K_COUNT; k++)
        if (strcmp(kind, KINDS[k]) == 0) {
            if (!PyCallable_Check(ref)) {
                PyErr_SetString(PyExc_TypeError, "bind_step: the reference must be callable");
                return NULL;
            }
            if (refs[k] != NULL && refs[k] != ref) {
                PyErr_SetString(PyExc_ValueError, "bind_step: another reference than before for this kind");
                return NULL;
            }
            Py_XSETREF(refs[k], Py_NewRef(ref));
            return PyCFunction_NewEx(&BOUND[k], stage, NULL);
        }
    PyErr_Format(PyExc_ValueError, "bind_step: no step %s (integrity, median, fix, position or reflection)", kind);
    return NULL;
}

PyObject *ep_site_counts(PyObject *Py_UNUSED(mod), PyObject *Py_UNUSED(args))
{
    PyObject *out = PyDict_New();
    for (int k = 0; k < K_COUNT && out != NULL; k++) {
        PyObject *v = Py_BuildValue("(KK)", done_n[k], handed_n[k]);
        if (v == NULL || PyDict_SetItemString(out, KINDS[k], v) < 0)
            Py_CLEAR(out);
        Py_XDECREF(v);
    }
    return out;
}
