/* livefix.analysis._epochcore: bind_step(), the site record's C steps bound to their stage as its
 * on_epoch; the steps are in _epochcore_site.c and _epochcore_median.c, the module in _epochcore.c.
 *
 * Why: a Python on_epoch that only asks the C step costs a frame per stage and epoch, about what a
 * small C step saves. The bound step is a builtin method of the stage (its __qualname__ is
 * the reference's, "StreamIntegrity.on_epoch", as the Analyzer's error notes show it): it runs the C
 * step and, when the step hands back (False, nothing changed), the reference function (the class's own
 * on_epoch, unchanged, given to bind_step) on the stage, so the Python code meets every case it would
 * have met. The stage holds the bound step in its __dict__ (a cycle stage -> step -> stage, freed by
 * the collector when the stage is dropped, like the other cores' bound methods). site_counts() says
 * how many epochs each step did and handed back (the tests' check that the C case runs).
 */
#include "_epochcore.h"

enum { K_INTEGRITY, K_MEDIAN, K_COUNT };
static const char *KINDS[K_COUNT] = {"integrity", "median"};
static unsigned long long done_n[K_COUNT], handed_n[K_COUNT];
static PyObject *refs[K_COUNT]; /* the reference of each kind: the class's on_epoch, set by bind_step */

static PyObject *run(int kind, PyObject *stage, PyObject *ep)
{
    static PyObject *(*const steps[K_COUNT])(PyObject *, PyObject *const *, Py_ssize_t) = {
        ep_integrity_epoch, ep_median_epoch};
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

#define BOUND_DOC "on_epoch(ep): the C step, or the reference when it hands back (livefix.analysis._epochcore)"
static PyMethodDef BOUND[K_COUNT] = {
    {"on_epoch", integrity_bound, METH_O, BOUND_DOC},
    {"on_epoch", median_bound, METH_O, BOUND_DOC},
};

PyObject *ep_bind_step(PyObject *Py_UNUSED(mod), PyObject *args)
{
    const char *kind;
    PyObject *stage, *ref;
    if (!PyArg_ParseTuple(args, "sOO", &kind, &stage, &ref))
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
    PyErr_Format(PyExc_ValueError, "bind_step: no step %s (integrity or median)", kind);
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
