/* livefix._native: the front of the hot path (framing of plain blocks, checksum, field splitting and
 * decoding of the eight hot sentence types) in C.
 *
 * Why the CPython API and not Cython or pybind11: building needs nothing but a C compiler and the
 * Python headers (no build-time dependency to fetch or pin), and we create every Python object
 * ourselves, so the values are exactly those the pure path makes (same dict keys in the same order,
 * same types), which is what keeps `livefix report --json` byte-identical between the two paths.
 *
 * The rule that makes identity hold by construction: this code only accepts the plain, common shape
 * of a line (ASCII, at most MAX_LINE bytes, "$TTMMM," header of a fast type, "*hh" that verifies,
 * every field of the simple form its conversion expects). Anything else returns None and the caller
 * runs the pure-Python reference for that line. No buffer is written beyond a fixed bound: fields are
 * read in place from the bytes object, and the only copy (a float's text) is length-checked.
 *
 * The module's files: this one (the module, its Python API and the framing split), _native_decode.c
 * (the hot sentence types), _native_fields.c (field conversions), _native_make.c (make()) and their
 * private header _native.h.
 */
#include "_native.h"
#include "_native_front.h"
#include <stdint.h>
#include <string.h>

PyDoc_STRVAR(split_doc,
"split_block(data: bytes, max_len: int) -> list[bytes] | None\n\n"
"A chunk of whole CRLF-terminated '$' sentences and nothing else -> its sentences; None when\n"
"anything is unusual (any other CR/LF, '$' mid-line, a byte >= 0x80, a line over max_len), so\n"
"the general Python scanner decides.");

/* 1 when none of the 8 bytes of w is >= 0x80, CR, LF or '$' (the bytes the split must look at).
 * Why: sentences are 60-80 bytes of plain text, so most words need no byte-by-byte look. haszero(v) is
 * exact for "some byte of v is zero" once every byte is below 0x80. */
static inline int plain_word(uint64_t w)
{
    const uint64_t ones = 0x0101010101010101ULL, highs = 0x8080808080808080ULL;
#define HASZERO(v) (((v) - ones) & ~(v) & highs)
    if (w & highs) return 0;
    uint64_t cr = w ^ (ones * 0x0D), lf = w ^ (ones * 0x0A), dollar = w ^ (ones * 0x24);
    return !(HASZERO(cr) | HASZERO(lf) | HASZERO(dollar));
#undef HASZERO
}

PyObject *nat_split_block(PyObject *self, PyObject *args)
{
    (void)self;
    PyObject *data;
    Py_ssize_t max_len;
    if (!PyArg_ParseTuple(args, "On", &data, &max_len)) return NULL;
    return nat_split(data, max_len);
}

PyObject *nat_split(PyObject *data, Py_ssize_t max_len)
{
    if (!PyBytes_CheckExact(data)) Py_RETURN_NONE;
    const unsigned char *s = (const unsigned char *)PyBytes_AS_STRING(data);
    Py_ssize_t n = PyBytes_GET_SIZE(data), i = 1, start = 0, lines = 0;
    if (n < 2 || s[0] != '$' || s[n - 2] != '\r' || s[n - 1] != '\n') Py_RETURN_NONE;
    /* first pass: validate and count, so the list is made at its size and nothing is undone; runs of
     * plain text are skipped a word at a time */
    while (i < n) {
        uint64_t w;
        while (i + 8 <= n) {
            memcpy(&w, s + i, 8);
            if (!plain_word(w)) break;
            i += 8;
        }
        if (i >= n) break;
        unsigned char c = s[i];
        if (c >= 128 || c == '\n' || c == '$') Py_RETURN_NONE;
        if (c != '\r') {
            i++;
            continue;
        }
        if (i + 1 >= n || s[i + 1] != '\n' || i - start > max_len) Py_RETURN_NONE;
        lines++;
        i += 2; /* past the LF: the next line must start with '$' */
        if (i < n && s[i] != '$') Py_RETURN_NONE;
        start = i++;
    }
    PyObject *out = PyList_New(lines);
    if (out == NULL) return NULL;
    /* second pass: every CR ends a line (the first pass saw each one followed by LF and '$') */
    start = 0;
    for (Py_ssize_t k = 0; k < lines; k++) {
        const unsigned char *cr = memchr(s + start, '\r', (size_t)(n - start));
        Py_ssize_t end = cr == NULL ? n : cr - s; /* never NULL: the first pass counted this CR */
        PyObject *b = PyBytes_FromStringAndSize((const char *)s + start, end - start);
        if (b == NULL) {
            Py_DECREF(out);
            return NULL;
        }
        PyList_SET_ITEM(out, k, b);
        start = end + 2;
    }
    return out;
}

PyDoc_STRVAR(decode_doc,
"decode(line: bytes) -> ((header, talker, msg_id), fields) | None\n\n"
"The fast-path decoding of one framed sentence, or None when the line is not of the plain common\n"
"shape (the caller then runs the pure-Python path for it).");

PyDoc_STRVAR(configure_doc,
"configure(talkers: Iterable[str], yy_pivot: int) -> None\n\n"
"The accepted two-letter talkers and the two-digit-year pivot, from the Python side (one source\n"
"of truth for both paths).");

PyDoc_STRVAR(make_doc,
"make(slots: tuple[member_descriptor, ...], values: tuple) -> object\n\n"
"An instance of the slotted class the descriptors belong to, each slot set to the value at the same\n"
"place, without running __init__ (a frozen dataclass's __init__ sets each field through\n"
"object.__setattr__: ~20x slower). The descriptors must be every slot of one class whose base is\n"
"object, each once; anything else raises TypeError.");

static PyMethodDef METHODS[] = {
    {"decode", nat_decode, METH_O, decode_doc},
    {"split_block", nat_split_block, METH_VARARGS, split_doc},
    {"configure", nat_configure, METH_VARARGS, configure_doc},
    {"make", (PyCFunction)(void (*)(void))nat_make, METH_FASTCALL, make_doc},
    {"field_names", nat_field_names, METH_O, "The field names this core gives a fast type, in order (for tests)."},
    {NULL, NULL, 0, NULL}};

static struct PyModuleDef MODULE = {PyModuleDef_HEAD_INIT, "livefix._native",
                                    "The compiled front of livefix's hot path (see livefix/_native.c).",
                                    -1, METHODS, NULL, NULL, NULL, NULL};

PyMODINIT_FUNC PyInit__native(void)
{
    if (nat_fields_init() < 0 || nat_decode_init() < 0) return NULL;
    PyObject *mod = PyModule_Create(&MODULE);
    if (mod != NULL && nat_front_add(mod) < 0) Py_CLEAR(mod);  /* DecoderFront, LinePump: _native_front.c */
    return mod;
}
