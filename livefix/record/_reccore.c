/* livefix.record._reccore: the record scan of a replay in C (livefix/record/reader.py keeps the
 * reference, RecordingReader._part, and picks this one when built).
 *
 * scan() walks a buffer of whole records (`@K mono wall n crc32hex\n`, n payload bytes, `\n`) and
 * makes the items of every record it is sure about, exactly as the reference does: the same head
 * grammar (a strict subset of what _parse_head accepts, the floats through the same
 * PyOS_string_to_double that float() uses), the same CRC-32 as zlib.crc32, Chunk for kind D and
 * fmt.decode (passed in) for every other kind. It stops at the end record, at a record that runs past
 * the buffer (the caller reads on), and at anything else (a damaged or unusual head, a CRC mismatch,
 * a head line too long): there the caller hands the part to the reference, which says what it is.
 *
 * The module's files: this one (the scan and the module) and _reccore_crc.c (the CRC-32, zlib's, in
 * a quarter of zlib.crc32's time: that was most of the reference's per-record cost); header _reccore.h.
 */
#include "_reccore.h"
#include <structmember.h>
#include <string.h>

#define MAX_RECORD_LINE 128      /* fmt.MAX_RECORD_LINE (checked at import: the module's caps) */
#define MAX_PAYLOAD (64L << 20)  /* reader.MAX_PAYLOAD */
#define MAX_NUM 40               /* longest float text taken here; longer ones go to the reference */

enum { SCAN_MORE = 0, SCAN_END = 1, SCAN_ODD = 2 };

/* ---- the record head ------------------------------------------------------------------------- */

typedef struct {
    char kind;
    double mono, wall;
    Py_ssize_t n;
    uint32_t crc;
} Head;

/* A float of the shape repr() writes ([-]d+[.d+][e[+-]d+]) at s[0:len]: 1 and its value (through
 * PyOS_string_to_double, as float() does); 0 for any other text; -1 with an exception set. */
static int head_float(const unsigned char *s, Py_ssize_t len, double *out)
{
    char text[MAX_NUM + 1];
    Py_ssize_t i = 0, d;
    if (len <= 0 || len > MAX_NUM) return 0;
    if (s[i] == '-') i++;
    for (d = i; i < len && s[i] >= '0' && s[i] <= '9'; i++) {}
    if (i == d) return 0;
    if (i < len && s[i] == '.') {
        for (d = ++i; i < len && s[i] >= '0' && s[i] <= '9'; i++) {}
        if (i == d) return 0;
    }
    if (i < len && (s[i] == 'e' || s[i] == 'E')) {
        i++;
        if (i < len && (s[i] == '+' || s[i] == '-')) i++;
        for (d = i; i < len && s[i] >= '0' && s[i] <= '9'; i++) {}
        if (i == d) return 0;
    }
    if (i != len) return 0;
    memcpy(text, s, (size_t)len);
    text[len] = '\0';
    char *end = NULL;
    double v = PyOS_string_to_double(text, &end, NULL);
    if (v == -1.0 && PyErr_Occurred()) return -1;
    if (end != text + len) return 0;
    *out = v;
    return 1;
}

static inline int hex_digit(unsigned char c)
{
    if (c >= '0' && c <= '9') return c - '0';
    if (c >= 'a' && c <= 'f') return c - 'a' + 10;
    if (c >= 'A' && c <= 'F') return c - 'A' + 10;
    return -1;
}

/* The head line s[0:len] without its '\n': 1 when of the writer's plain shape (h filled), 0 when
 * anything differs (the reference decides), -1 with an exception set. */
static int parse_head(const unsigned char *s, Py_ssize_t len, Head *h)
{
    const unsigned char *f[4];
    Py_ssize_t flen[4], i, k = 0, start = 3;
    if (len < 4 || s[0] != '@' || s[1] <= ' ' || s[1] >= 0x7f || s[2] != ' ') return 0;
    h->kind = (char)s[1];
    for (i = 3; i <= len; i++) {  /* the four fields after the kind, one space apart */
        if (i == len || s[i] == ' ') {
            if (k == 4 || i == start) return 0;
            f[k] = s + start;
            flen[k++] = i - start;
            start = i + 1;
        }
    }
    if (k != 4) return 0;
    int r = head_float(f[0], flen[0], &h->mono);
    if (r <= 0) return r;
    r = head_float(f[1], flen[1], &h->wall);
    if (r <= 0) return r;
    if (flen[2] > 9 || flen[3] > 8) return 0;
    long n = 0;
    for (i = 0; i < flen[2]; i++) {
        if (f[2][i] < '0' || f[2][i] > '9') return 0;
        n = n * 10 + (f[2][i] - '0');
    }
    if (n > MAX_PAYLOAD) return 0;
    h->n = (Py_ssize_t)n;
    uint32_t crc = 0;
    for (i = 0; i < flen[3]; i++) {
        int x = hex_digit(f[3][i]);
        if (x < 0) return 0;
        crc = crc << 4 | (uint32_t)x;
    }
    h->crc = crc;
    return 1;
}

/* ---- Chunk without __init__ (as livefix._native.make) ------------------------------------------ */

/* The offsets of Chunk's three slots from its descriptors (mono, wall, data), checked so no value
 * can make scan() write outside an instance; 0 and TypeError when they are not what they must be. */
static int chunk_layout(PyObject *slots, PyTypeObject **tp_out, Py_ssize_t off[3])
{
    if (!PyTuple_CheckExact(slots) || PyTuple_GET_SIZE(slots) != 3) goto bad;
    PyTypeObject *tp = NULL;
    for (Py_ssize_t i = 0; i < 3; i++) {
        PyObject *d = PyTuple_GET_ITEM(slots, i);
        if (!Py_IS_TYPE(d, &PyMemberDescr_Type)) goto bad;
        if (tp == NULL) tp = PyDescr_TYPE(d);
        PyMemberDef *m = ((PyMemberDescrObject *)d)->d_member;
        if (PyDescr_TYPE(d) != tp || m->type != T_OBJECT_EX || (m->flags & READONLY)
            || m->offset < (Py_ssize_t)sizeof(PyObject)
            || m->offset > (Py_ssize_t)(sizeof(PyObject) + 2 * sizeof(PyObject *)))
            goto bad;
        off[i] = m->offset;
    }
    if (off[0] == off[1] || off[0] == off[2] || off[1] == off[2]) goto bad;
    if (!(tp->tp_flags & Py_TPFLAGS_HEAPTYPE) || tp->tp_base != &PyBaseObject_Type || tp->tp_itemsize != 0
        || tp->tp_dictoffset != 0 || tp->tp_weaklistoffset != 0 || tp->tp_members == NULL
        || tp->tp_basicsize != (Py_ssize_t)(sizeof(PyObject) + 3 * sizeof(PyObject *))
        || tp->tp_members[0].name == NULL || tp->tp_members[1].name == NULL || tp->tp_members[2].name == NULL
        || tp->tp_members[3].name != NULL)
        goto bad;
    *tp_out = tp;
    return 1;
bad:
    PyErr_SetString(PyExc_TypeError, "scan: slots must be (Chunk.mono, Chunk.wall, Chunk.data)");
    return 0;
}

/* a new Chunk holding the three values (stolen); NULL (values released) on no memory */
static PyObject *new_chunk(PyTypeObject *tp, const Py_ssize_t off[3], PyObject *v[3])
{
    PyObject *obj = tp->tp_alloc(tp, 0);
    if (obj == NULL) {
        for (int i = 0; i < 3; i++) Py_DECREF(v[i]);
        return NULL;
    }
    for (int i = 0; i < 3; i++) *(PyObject **)((char *)obj + off[i]) = v[i];
    return obj;
}

/* ---- scan ------------------------------------------------------------------------------------ */

/* One record at s[0:avail]: its item appended to out (unless decode said None), *used its length.
 * Returns SCAN_MORE / SCAN_END / SCAN_ODD when it stops there, -1 to go on, -2 on an exception. */
static int one_record(const unsigned char *s, Py_ssize_t avail, PyTypeObject *tp, const Py_ssize_t off[3],
                      PyObject *decode, PyObject *out, Py_ssize_t *used, Py_ssize_t *need)
{
    Py_ssize_t lim = avail < MAX_RECORD_LINE ? avail : MAX_RECORD_LINE;
    const unsigned char *nl = memchr(s, '\n', (size_t)lim);
    if (nl == NULL) return avail < MAX_RECORD_LINE ? SCAN_MORE : SCAN_ODD;
    Head h;
    int r = parse_head(s, nl - s, &h);
    if (r < 0) return -2;
    if (r == 0) return SCAN_ODD;
    Py_ssize_t body = nl - s + 1;
    if (h.n + 1 > avail - body) {
        *need = body + h.n + 1;
        return SCAN_MORE;
    }
    const unsigned char *payload = s + body;
    if (payload[h.n] != '\n' || rec_crc32(payload, (size_t)h.n, 1) != h.crc) return SCAN_ODD;
    *used = body + h.n + 1;
    if (h.kind == 'E') return SCAN_END;
    PyObject *v[3] = {PyFloat_FromDouble(h.mono), PyFloat_FromDouble(h.wall),
                      PyBytes_FromStringAndSize((const char *)payload, h.n)};
    if (v[0] == NULL || v[1] == NULL || v[2] == NULL) {
        for (int i = 0; i < 3; i++) Py_XDECREF(v[i]);
        return -2;
    }
    PyObject *item;
    if (h.kind == 'D') {
        item = new_chunk(tp, off, v);
    } else {  /* every other kind: the reference's own fmt.decode */
        PyObject *kind = PyUnicode_FromStringAndSize(&h.kind, 1);
        item = kind == NULL ? NULL : PyObject_CallFunctionObjArgs(decode, kind, v[0], v[1], v[2], NULL);
        Py_XDECREF(kind);
        for (int i = 0; i < 3; i++) Py_DECREF(v[i]);
    }
    if (item == NULL) return -2;
    r = item == Py_None ? 0 : PyList_Append(out, item);
    Py_DECREF(item);
    return r < 0 ? -2 : -1;
}

PyDoc_STRVAR(scan_doc,
"scan(buf: bytes, pos: int, slots: tuple, decode) -> (items, pos, records, status, need)\n\n"
"The items of the whole records in buf from pos on (slots: (Chunk.mono, Chunk.wall, Chunk.data);\n"
"decode: fmt.decode, for every kind but D and E); pos: where it stopped; records: how many it read\n"
"(end record not counted); status: SCAN_MORE (the rest of buf is part of a record: read on, need\n"
"its length when known, else 0), SCAN_END (pos past the end record) or SCAN_ODD (the record at pos\n"
"is damaged or unusual: the reference reads it).");

static PyObject *rec_scan(PyObject *self, PyObject *args)
{
    (void)self;
    PyObject *buf, *slots, *decode;
    Py_ssize_t pos;
    if (!PyArg_ParseTuple(args, "O!nOO", &PyBytes_Type, &buf, &pos, &slots, &decode)) return NULL;
    PyTypeObject *tp;
    Py_ssize_t off[3];
    if (!chunk_layout(slots, &tp, off)) return NULL;
    const unsigned char *s = (const unsigned char *)PyBytes_AS_STRING(buf);
    Py_ssize_t n = PyBytes_GET_SIZE(buf), records = 0, need = 0;
    if (pos < 0 || pos > n) {
        PyErr_SetString(PyExc_ValueError, "scan: pos outside buf");
        return NULL;
    }
    PyObject *out = PyList_New(0);
    if (out == NULL) return NULL;
    int status;
    for (;;) {
        Py_ssize_t used = 0;
        if (pos == n) {
            status = SCAN_MORE;
            break;
        }
        status = one_record(s + pos, n - pos, tp, off, decode, out, &used, &need);
        if (status == -2) {
            Py_DECREF(out);
            return NULL;
        }
        pos += used;
        if (status >= 0) break;
        records++;
    }
    return Py_BuildValue("(Nnnin)", out, pos, records, status, need);
}

static PyObject *rec_crc32_py(PyObject *self, PyObject *args)
{
    (void)self;
    Py_buffer b;
    int simd = 1;
    if (!PyArg_ParseTuple(args, "y*|p", &b, &simd)) return NULL;
    uint32_t c = rec_crc32((const unsigned char *)b.buf, (size_t)b.len, simd);
    PyBuffer_Release(&b);
    return PyLong_FromUnsignedLong(c);
}

static PyMethodDef METHODS[] = {
    {"scan", rec_scan, METH_VARARGS, scan_doc},
    {"crc32", rec_crc32_py, METH_VARARGS,
     "crc32(data, simd=True) -> int: zlib.crc32(data); simd False forces the table (for tests)."},
    {NULL, NULL, 0, NULL}};

static struct PyModuleDef MODULE = {PyModuleDef_HEAD_INIT, "livefix.record._reccore",
                                    "The record scan of a replay (see livefix/record/_reccore.c).",
                                    -1, METHODS, NULL, NULL, NULL, NULL};

PyMODINIT_FUNC PyInit__reccore(void)
{
    int simd = rec_crc_init();
    PyObject *mod = PyModule_Create(&MODULE);
    if (mod == NULL) return NULL;
    if (PyModule_AddIntConstant(mod, "MAX_RECORD_LINE", MAX_RECORD_LINE) < 0
        || PyModule_AddIntConstant(mod, "MAX_PAYLOAD", MAX_PAYLOAD) < 0
        || PyModule_AddIntConstant(mod, "SCAN_MORE", SCAN_MORE) < 0
        || PyModule_AddIntConstant(mod, "SCAN_END", SCAN_END) < 0
        || PyModule_AddIntConstant(mod, "SCAN_ODD", SCAN_ODD) < 0
        || PyModule_AddIntConstant(mod, "SIMD", simd) < 0)
        Py_CLEAR(mod);
    return mod;
}
