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
 */
#define PY_SSIZE_T_CLEAN
#include <Python.h>
#include <datetime.h>
#include <math.h>
#include <string.h>
#include <structmember.h>  /* T_OBJECT_EX, READONLY: slot descriptors (make) */

#define MAX_LINE 128   /* the pure inline path's limit (livefix/decode/decoder.py) */
#define MAX_FIELDS 64  /* a 128-byte line has at most 121 payload bytes; more fields than this punts */
#define MAX_BLOCKS 99  /* GSV satellite blocks named with two digits (livefix/decode/fast.py) */
#define MAX_NUM 63     /* longest numeric text converted here; longer ones punt */

enum { C_TM, C_LA, C_CH, C_IN, C_DE, C_DT };
enum { T_GGA, T_RMC, T_GSA, T_GST, T_VTG, T_ZDA, T_GNS, T_GSV, NTYPES };
static const char *TYPE_NAMES[NTYPES] = {"GGA", "RMC", "GSA", "GST", "VTG", "ZDA", "GNS", "GSV"};

typedef struct { const char *name; int conv; } FieldDef;

/* Payload definitions in pynmeagps order; must match _DEFS in livefix/decode/fast.py (a test checks). */
static const FieldDef GGA_DEF[] = {
    {"time", C_TM}, {"lat", C_LA}, {"NS", C_CH}, {"lon", C_LA}, {"EW", C_CH}, {"quality", C_IN},
    {"numSV", C_IN}, {"HDOP", C_DE}, {"alt", C_DE}, {"altUnit", C_CH}, {"sep", C_DE},
    {"sepUnit", C_CH}, {"diffAge", C_DE}, {"diffStation", C_IN}};
static const FieldDef RMC_DEF[] = {
    {"time", C_TM}, {"status", C_CH}, {"lat", C_LA}, {"NS", C_CH}, {"lon", C_LA}, {"EW", C_CH},
    {"spd", C_DE}, {"cog", C_DE}, {"date", C_DT}, {"mv", C_DE}, {"mvEW", C_CH}, {"posMode", C_CH},
    {"navStatus", C_CH}};
static const FieldDef GSA_DEF[] = {
    {"opMode", C_CH}, {"navMode", C_IN}, {"svid_01", C_IN}, {"svid_02", C_IN}, {"svid_03", C_IN},
    {"svid_04", C_IN}, {"svid_05", C_IN}, {"svid_06", C_IN}, {"svid_07", C_IN}, {"svid_08", C_IN},
    {"svid_09", C_IN}, {"svid_10", C_IN}, {"svid_11", C_IN}, {"svid_12", C_IN}, {"PDOP", C_DE},
    {"HDOP", C_DE}, {"VDOP", C_DE}, {"systemId", C_CH}};
static const FieldDef GST_DEF[] = {
    {"time", C_TM}, {"rangeRms", C_DE}, {"stdMajor", C_DE}, {"stdMinor", C_DE}, {"orient", C_DE},
    {"stdLat", C_DE}, {"stdLong", C_DE}, {"stdAlt", C_DE}};
static const FieldDef VTG_DEF[] = {
    {"cogt", C_DE}, {"cogtUnit", C_CH}, {"cogm", C_DE}, {"cogmUnit", C_CH}, {"sogn", C_DE},
    {"sognUnit", C_CH}, {"sogk", C_DE}, {"sogkUnit", C_CH}, {"posMode", C_CH}};
static const FieldDef ZDA_DEF[] = {
    {"time", C_TM}, {"day", C_IN}, {"month", C_IN}, {"year", C_IN}, {"ltzh", C_CH}, {"ltzn", C_CH}};
static const FieldDef GNS_DEF[] = {
    {"time", C_TM}, {"lat", C_LA}, {"NS", C_CH}, {"lon", C_LA}, {"EW", C_CH}, {"posMode", C_CH},
    {"numSV", C_IN}, {"HDOP", C_DE}, {"alt", C_DE}, {"sep", C_DE}, {"diffAge", C_DE},
    {"diffStation", C_IN}, {"navStatus", C_CH}};

#define NDEF(a) ((int)(sizeof(a) / sizeof((a)[0])))
static const FieldDef *DEFS[NTYPES] = {GGA_DEF, RMC_DEF, GSA_DEF, GST_DEF, VTG_DEF, ZDA_DEF, GNS_DEF, NULL};
static const int NDEFS[NTYPES] = {NDEF(GGA_DEF), NDEF(RMC_DEF), NDEF(GSA_DEF), NDEF(GST_DEF),
                                  NDEF(VTG_DEF), NDEF(ZDA_DEF), NDEF(GNS_DEF), 0};
/* index of the N/S and E/W fields (they sign lat and lon), -1 when the type has none */
static int NS_AT[NTYPES], EW_AT[NTYPES];

/* State set once by configure(): interned key strings, the accepted talkers and the header tuples. */
static PyObject *KEYS[NTYPES][32];
static PyObject *GSV_KEYS[3 + 4 * MAX_BLOCKS];
static PyObject *KEY_SIGNAL;
static PyObject *EMPTY;                 /* "" */
static signed char TALKER[128][128];    /* talker -> index into INFO, -1 when not accepted */
static PyObject **INFO;                 /* [talker * NTYPES + type] -> (header, talker, msg_id) */
static int NTALKERS;
static int YY_PIVOT = -1;               /* -1: configure() not called yet */

static inline int is_digit(char c) { return c >= '0' && c <= '9'; }

static int all_digits(const char *s, Py_ssize_t n)
{
    for (Py_ssize_t i = 0; i < n; i++)
        if (!is_digit(s[i])) return 0;
    return 1;
}

/* A dict sized for n keys up front (no resize while filling); private API, public fallback. */
static PyObject *new_dict(Py_ssize_t n)
{
#if PY_VERSION_HEX < 0x030D0000
    return _PyDict_NewPresized(n);
#else
    (void)n;
    return PyDict_New();
#endif
}

static PyObject *ascii_str(const char *s, Py_ssize_t n)
{
    if (n == 0) { Py_INCREF(EMPTY); return EMPTY; }
    if (n == 1) return PyUnicode_FromStringAndSize(s, 1);  /* the interpreter's one-character singletons */
    PyObject *u = PyUnicode_New(n, 127);
    if (u != NULL) memcpy(PyUnicode_DATA(u), s, (size_t)n);
    return u;
}

/* Result codes of a conversion: an object, or PUNT (the pure path must decide), or an error. */
#define PUNT ((PyObject *)1)

/* int(s) for [+-]?[0-9]{1,18}; "" -> "" */
static PyObject *conv_int(const char *s, Py_ssize_t n)
{
    if (n == 0) { Py_INCREF(EMPTY); return EMPTY; }
    Py_ssize_t i = 0;
    int neg = 0;
    if (s[0] == '-' || s[0] == '+') { neg = s[0] == '-'; i = 1; }
    if (n - i < 1 || n - i > 18) return PUNT;
    long long v = 0;
    for (; i < n; i++) {
        if (!is_digit(s[i])) return PUNT;
        v = v * 10 + (s[i] - '0');
    }
    return PyLong_FromLongLong(neg ? -v : v);
}

/* The text of a plain decimal [+-]?[0-9]*(.[0-9]*)? with at least one digit -> double, exactly as
 * float() (both use the interpreter's correctly rounded PyOS_string_to_double). 0 when not plain. */
static int plain_double(const char *s, Py_ssize_t n, double *out)
{
    char buf[MAX_NUM + 1];
    Py_ssize_t i = 0, digits = 0;
    int dot = 0;
    if (n < 1 || n > MAX_NUM) return 0;
    if (s[0] == '-' || s[0] == '+') i = 1;
    for (; i < n; i++) {
        if (is_digit(s[i])) digits++;
        else if (s[i] == '.' && !dot) dot = 1;
        else return 0;
    }
    if (!digits) return 0;
    memcpy(buf, s, (size_t)n);
    buf[n] = '\0';
    char *end = NULL;
    double v = PyOS_string_to_double(buf, &end, NULL);
    if (end != buf + n || (v == -1.0 && PyErr_Occurred())) {
        PyErr_Clear();
        return 0;
    }
    *out = v;
    return 1;
}

static PyObject *conv_float(const char *s, Py_ssize_t n)
{
    double v;
    if (n == 0) { Py_INCREF(EMPTY); return EMPTY; }
    if (!plain_double(s, n, &v)) return PUNT;
    return PyFloat_FromDouble(v);
}

/* parse_time: hhmmss or hhmmss.f{1,6} with a valid clock -> datetime.time; "" -> "" */
static PyObject *conv_time(const char *s, Py_ssize_t n)
{
    if (n == 0) { Py_INCREF(EMPTY); return EMPTY; }
    if (!(n == 6 || (n >= 8 && n <= 13 && s[6] == '.' && all_digits(s + 7, n - 7))) || !all_digits(s, 6))
        return PUNT;
    int hh = (s[0] - '0') * 10 + (s[1] - '0'), mm = (s[2] - '0') * 10 + (s[3] - '0');
    int ss = (s[4] - '0') * 10 + (s[5] - '0'), us = 0;
    if (hh >= 24 || mm >= 60 || ss >= 60) return PUNT;
    for (Py_ssize_t i = 7; i < 13; i++) us = us * 10 + (i < n ? s[i] - '0' : 0);
    return PyTime_FromTime(hh, mm, ss, us);
}

static int is_leap(int y) { return (y % 4 == 0 && y % 100 != 0) || y % 400 == 0; }

/* parse_date: ddmmyy -> datetime.date by the one two-digit-year pivot; "" for an impossible day */
static PyObject *conv_date(const char *s, Py_ssize_t n)
{
    static const int MDAYS[12] = {31, 28, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31};
    if (n == 0) { Py_INCREF(EMPTY); return EMPTY; }
    if (n != 6 || !all_digits(s, 6)) return PUNT;
    int dd = (s[0] - '0') * 10 + (s[1] - '0'), mo = (s[2] - '0') * 10 + (s[3] - '0');
    int yy = (s[4] - '0') * 10 + (s[5] - '0');
    if (dd < 1 || dd > 31 || mo < 1 || mo > 12) return PUNT;
    int year = yy + (yy <= YY_PIVOT ? 2000 : 1900);
    if (dd > MDAYS[mo - 1] + (mo == 2 && is_leap(year))) { Py_INCREF(EMPTY); return EMPTY; }
    return PyDate_FromDate(year, mo, dd);
}

/* parse_latlon: (d)ddmm.mmmm -> unsigned degrees (the sign comes later). Returns 1 with *v set,
 * 0 for "" (no '.' at index >= 4), -1 to punt (unusual digits, or a near-tie the pure path rounds). */
static int conv_latlon(const char *s, Py_ssize_t n, double *v)
{
    Py_ssize_t dp = -1;
    for (Py_ssize_t i = 0; i < n; i++)
        if (s[i] == '.') { dp = i; break; }
    if (dp < 4) return 0;
    if (!all_digits(s, dp) || !all_digits(s + dp + 1, n - dp - 1)) return -1;
    double deg, mn;
    if (!plain_double(s, dp - 2, &deg) || !plain_double(s + dp - 2, n - dp + 2, &mn)) return -1;
    double x = fabs(deg) + mn / 60;
    double y = x * 1e10;
    if (!(-8e12 < y && y < 8e12)) return -1;
    double r = nearbyint(y);  /* round half to even, as Python's round() */
    if (r == 0 || !(-0.499 < y - r && y - r < 0.499)) return -1;
    *v = r / 1e10;
    return 1;
}

static PyObject *convert(int conv, const char *s, Py_ssize_t n)
{
    switch (conv) {
    case C_CH: return ascii_str(s, n);
    case C_IN: return conv_int(s, n);
    case C_DE: return conv_float(s, n);
    case C_TM: return conv_time(s, n);
    case C_DT: return conv_date(s, n);
    default: return PUNT;
    }
}

static int type_of(const char *m)
{
    switch (m[0]) {
    case 'G':
        if (m[1] == 'G' && m[2] == 'A') return T_GGA;
        if (m[1] == 'S' && m[2] == 'A') return T_GSA;
        if (m[1] == 'S' && m[2] == 'T') return T_GST;
        if (m[1] == 'S' && m[2] == 'V') return T_GSV;
        if (m[1] == 'N' && m[2] == 'S') return T_GNS;
        return -1;
    case 'R': return m[1] == 'M' && m[2] == 'C' ? T_RMC : -1;
    case 'V': return m[1] == 'T' && m[2] == 'G' ? T_VTG : -1;
    case 'Z': return m[1] == 'D' && m[2] == 'A' ? T_ZDA : -1;
    default: return -1;
    }
}

static int hexval(char c)
{
    if (c >= '0' && c <= '9') return c - '0';
    if (c >= 'A' && c <= 'F') return c - 'A' + 10;
    if (c >= 'a' && c <= 'f') return c - 'a' + 10;
    return -1;
}

/* Build the fields dict of a non-GSV type; NULL with an error, PUNT to hand the line back. */
static PyObject *plan_fields(int t, const char *const *fs, const Py_ssize_t *fl, int nf)
{
    const FieldDef *def = DEFS[t];
    int m = nf < NDEFS[t] ? nf : NDEFS[t];
    PyObject *vals[32];
    double coord[32];
    int k;
    for (k = 0; k < m; k++) {
        PyObject *v;
        if (def[k].conv == C_LA) {
            int r = conv_latlon(fs[k], fl[k], &coord[k]);
            if (r < 0) v = PUNT;
            else if (r == 0) { Py_INCREF(EMPTY); v = EMPTY; }
            else v = Py_None;  /* placeholder: made a float once the hemisphere is known */
        } else {
            v = convert(def[k].conv, fs[k], fl[k]);
        }
        if (v == NULL || v == PUNT) {
            for (int j = 0; j < k; j++) if (vals[j] != Py_None) Py_DECREF(vals[j]);
            return v;
        }
        vals[k] = v;
    }
    /* N/S and E/W set the sign as pynmeagps does (-abs for S/W, abs otherwise), numbers only */
    int ns = NS_AT[t], ew = EW_AT[t];
    for (k = 0; k < m; k++) {
        if (vals[k] != Py_None) continue;
        int hemi = k < ns ? ns : ew;  /* lat comes before NS, lon before EW */
        char neg = k < ns ? 'S' : 'W';
        double x = coord[k];
        if (nf > hemi) x = (fl[hemi] == 1 && fs[hemi][0] == neg) ? -fabs(x) : fabs(x);
        vals[k] = PyFloat_FromDouble(x);
        if (vals[k] == NULL) {
            for (int j = 0; j < m; j++) if (j != k && vals[j] != Py_None) Py_XDECREF(vals[j]);
            return NULL;
        }
    }
    PyObject *d = new_dict(m);
    int bad = d == NULL;
    for (k = 0; k < m; k++) {
        if (!bad && PyDict_SetItem(d, KEYS[t][k], vals[k]) < 0) bad = 1;
        Py_DECREF(vals[k]);
    }
    if (bad) { Py_XDECREF(d); return NULL; }
    return d;
}

static PyObject *gsv_fields(const char *const *fs, const Py_ssize_t *fl, int nf)
{
    int m = nf, k = 0;
    if (nf >= 3) {
        k = (nf - 3) >> 2;
        if (k > MAX_BLOCKS) return PUNT;
        m = 3 + 4 * k;
    }
    PyObject *d = new_dict(m + 1);
    if (d == NULL) return NULL;
    for (int i = 0; i < m; i++) {
        PyObject *v = conv_int(fs[i], fl[i]);  /* C/N0 with decimals punts: the pure path keeps them */
        if (v == NULL || v == PUNT) { Py_DECREF(d); return v; }
        int r = PyDict_SetItem(d, GSV_KEYS[i], v);
        Py_DECREF(v);
        if (r < 0) { Py_DECREF(d); return NULL; }
    }
    if (nf >= 3 && m < nf) {
        PyObject *v = ascii_str(fs[m], fl[m]);
        if (v == NULL || PyDict_SetItem(d, KEY_SIGNAL, v) < 0) { Py_XDECREF(v); Py_DECREF(d); return NULL; }
        Py_DECREF(v);
    }
    return d;
}

PyDoc_STRVAR(decode_doc,
"decode(line: bytes) -> ((header, talker, msg_id), fields) | None\n\n"
"The fast-path decoding of one framed sentence, or None when the line is not of the plain common\n"
"shape (the caller then runs the pure-Python path for it).");

static PyObject *native_decode(PyObject *self, PyObject *arg)
{
    (void)self;
    if (YY_PIVOT < 0) { PyErr_SetString(PyExc_RuntimeError, "livefix._native: configure() first"); return NULL; }
    if (!PyBytes_CheckExact(arg)) Py_RETURN_NONE;
    const char *s = PyBytes_AS_STRING(arg);
    Py_ssize_t n = PyBytes_GET_SIZE(arg);
    if (n < 10 || n > MAX_LINE || s[0] != '$' || s[6] != ',' || s[n - 3] != '*') Py_RETURN_NONE;
    unsigned char a = (unsigned char)s[1], b = (unsigned char)s[2];
    if (a >= 128 || b >= 128 || TALKER[a][b] < 0) Py_RETURN_NONE;
    int t = type_of(s + 3);
    int h1 = hexval(s[n - 2]), h2 = hexval(s[n - 1]);
    if (t < 0 || h1 < 0 || h2 < 0) Py_RETURN_NONE;
    /* ASCII, no '*' in the payload, checksum; split the payload in the same pass */
    const char *fs[MAX_FIELDS];
    Py_ssize_t fl[MAX_FIELDS];
    int nf = 0;
    unsigned x = 0;
    Py_ssize_t i, start = 7, star = n - 3;
    for (i = 1; i < 7; i++) x ^= (unsigned char)s[i];
    for (i = 7; i < star; i++) {
        unsigned char c = (unsigned char)s[i];
        if (c >= 128 || c == '*') Py_RETURN_NONE;
        x ^= c;
        if (c == ',') {
            if (nf >= MAX_FIELDS - 1) Py_RETURN_NONE;
            fs[nf] = s + start; fl[nf] = i - start; nf++;
            start = i + 1;
        }
    }
    fs[nf] = s + start; fl[nf] = star - start; nf++;
    if (x != (unsigned)(h1 << 4 | h2)) Py_RETURN_NONE;
    PyObject *fields = t == T_GSV ? gsv_fields(fs, fl, nf) : plan_fields(t, fs, fl, nf);
    if (fields == NULL) return NULL;
    if (fields == PUNT) Py_RETURN_NONE;
    PyObject *info = INFO[TALKER[a][b] * NTYPES + t];
    PyObject *out = PyTuple_New(2);
    if (out == NULL) { Py_DECREF(fields); return NULL; }
    Py_INCREF(info);
    PyTuple_SET_ITEM(out, 0, info);
    PyTuple_SET_ITEM(out, 1, fields);
    return out;
}

PyDoc_STRVAR(split_doc,
"split_block(data: bytes, max_len: int) -> list[bytes] | None\n\n"
"A chunk of whole CRLF-terminated '$' sentences and nothing else -> its sentences; None when\n"
"anything is unusual (any other CR/LF, '$' mid-line, a byte >= 0x80, a line over max_len), so\n"
"the general Python scanner decides.");

static PyObject *native_split_block(PyObject *self, PyObject *args)
{
    (void)self;
    PyObject *data;
    Py_ssize_t max_len;
    if (!PyArg_ParseTuple(args, "On", &data, &max_len)) return NULL;
    if (!PyBytes_CheckExact(data)) Py_RETURN_NONE;
    const unsigned char *s = (const unsigned char *)PyBytes_AS_STRING(data);
    Py_ssize_t n = PyBytes_GET_SIZE(data), i, start = 0, lines = 0;
    if (n < 2 || s[0] != '$' || s[n - 2] != '\r' || s[n - 1] != '\n') Py_RETURN_NONE;
    /* first pass: validate and count, so the list is made at its size and nothing is undone */
    for (i = 1; i < n; i++) {
        unsigned char c = s[i];
        if (c >= 128 || c == '\n' || c == '$') Py_RETURN_NONE;
        if (c == '\r') {
            if (i + 1 >= n || s[i + 1] != '\n' || i - start > max_len) Py_RETURN_NONE;
            lines++;
            i += 2;  /* past the LF: the next line must start with '$' */
            if (i < n && s[i] != '$') Py_RETURN_NONE;
            start = i;
        }
    }
    PyObject *out = PyList_New(lines);
    if (out == NULL) return NULL;
    Py_ssize_t k = 0;
    start = 0;
    for (i = 1; i < n && k < lines; i++) {
        if (s[i] == '\r') {
            PyObject *b = PyBytes_FromStringAndSize((const char *)s + start, i - start);
            if (b == NULL) { Py_DECREF(out); return NULL; }
            PyList_SET_ITEM(out, k++, b);
            i += 2;
            start = i;
        }
    }
    return out;
}

PyDoc_STRVAR(configure_doc,
"configure(talkers: Iterable[str], yy_pivot: int) -> None\n\n"
"The accepted two-letter talkers and the two-digit-year pivot, from the Python side (one source\n"
"of truth for both paths).");

static PyObject *native_configure(PyObject *self, PyObject *args)
{
    (void)self;
    PyObject *talkers;
    int pivot;
    if (!PyArg_ParseTuple(args, "Oi", &talkers, &pivot)) return NULL;
    PyObject *seq = PySequence_Fast(talkers, "talkers must be iterable");
    if (seq == NULL) return NULL;
    Py_ssize_t nt = PySequence_Fast_GET_SIZE(seq);
    if (nt > 127) { Py_DECREF(seq); PyErr_SetString(PyExc_ValueError, "too many talkers"); return NULL; }
    PyObject **info = PyMem_Calloc((size_t)(nt ? nt : 1) * NTYPES, sizeof(PyObject *));
    if (info == NULL) { Py_DECREF(seq); return PyErr_NoMemory(); }
    signed char table[128][128];
    memset(table, -1, sizeof table);
    int ok = 1;
    for (Py_ssize_t i = 0; i < nt && ok; i++) {
        PyObject *tk = PySequence_Fast_GET_ITEM(seq, i);
        Py_ssize_t len;
        const char *c = PyUnicode_Check(tk) ? PyUnicode_AsUTF8AndSize(tk, &len) : NULL;
        if (c == NULL || len != 2 || (unsigned char)c[0] >= 128 || (unsigned char)c[1] >= 128) {
            if (!PyErr_Occurred()) PyErr_SetString(PyExc_ValueError, "a talker is two ASCII characters");
            ok = 0;
            break;
        }
        table[(int)c[0]][(int)c[1]] = (signed char)i;
        for (int t = 0; t < NTYPES && ok; t++) {
            info[i * NTYPES + t] = Py_BuildValue("(s#ss)", "", (Py_ssize_t)0, c, TYPE_NAMES[t]);
            PyObject *hdr = PyUnicode_FromFormat("%s%s", c, TYPE_NAMES[t]);
            if (info[i * NTYPES + t] == NULL || hdr == NULL) { Py_XDECREF(hdr); ok = 0; break; }
            PyUnicode_InternInPlace(&hdr);
            PyObject *old = PyTuple_GET_ITEM(info[i * NTYPES + t], 0);
            PyTuple_SET_ITEM(info[i * NTYPES + t], 0, hdr);
            Py_DECREF(old);
        }
    }
    Py_DECREF(seq);
    if (!ok) {
        for (Py_ssize_t i = 0; i < nt * NTYPES; i++) Py_XDECREF(info[i]);
        PyMem_Free(info);
        return NULL;
    }
    if (INFO != NULL) {
        for (Py_ssize_t i = 0; i < (Py_ssize_t)NTALKERS * NTYPES; i++) Py_XDECREF(INFO[i]);
        PyMem_Free(INFO);
    }
    INFO = info;
    NTALKERS = (int)nt;
    memcpy(TALKER, table, sizeof table);
    YY_PIVOT = pivot;
    Py_RETURN_NONE;
}

static PyObject *def_names(PyObject *self, PyObject *arg)
{
    (void)self;
    Py_ssize_t len;
    const char *m = PyUnicode_AsUTF8AndSize(arg, &len);
    if (m == NULL) return NULL;
    int t = len == 3 ? type_of(m) : -1;
    if (t < 0) { PyErr_SetString(PyExc_KeyError, "not a fast type"); return NULL; }
    int n = t == T_GSV ? 3 + 4 * MAX_BLOCKS : NDEFS[t];
    PyObject *out = PyTuple_New(n);
    for (int i = 0; out != NULL && i < n; i++) {
        PyObject *k = t == T_GSV ? GSV_KEYS[i] : KEYS[t][i];
        Py_INCREF(k);
        PyTuple_SET_ITEM(out, i, k);
    }
    return out;
}

PyDoc_STRVAR(make_doc,
"make(slots: tuple[member_descriptor, ...], values: tuple) -> object\n\n"
"An instance of the slotted class the descriptors belong to, each slot set to the value at the same\n"
"place, without running __init__ (a frozen dataclass's __init__ sets each field through\n"
"object.__setattr__: ~20x slower). The descriptors must be every slot of one class whose base is\n"
"object, each once; anything else raises TypeError.");

/* Checks everything per call (a pointer compare per slot): no Python value can make it write
 * outside the instance, skip a slot or set one twice. */
static PyObject *native_make(PyObject *self, PyObject *const *args, Py_ssize_t nargs)
{
    (void)self;
    if (nargs != 2 || !PyTuple_CheckExact(args[0]) || !PyTuple_CheckExact(args[1])) {
        PyErr_SetString(PyExc_TypeError, "make(slots, values): two tuples");
        return NULL;
    }
    PyObject *slots = args[0], *values = args[1];
    Py_ssize_t n = PyTuple_GET_SIZE(slots), i, members = 0;
    if (n == 0 || PyTuple_GET_SIZE(values) != n || !Py_IS_TYPE(PyTuple_GET_ITEM(slots, 0), &PyMemberDescr_Type)) {
        PyErr_SetString(PyExc_TypeError, "make: one value per slot descriptor");
        return NULL;
    }
    PyTypeObject *tp = PyDescr_TYPE(PyTuple_GET_ITEM(slots, 0));
    /* a Python class of object slots only: no other C fields that tp_new would have set up */
    if (!(tp->tp_flags & Py_TPFLAGS_HEAPTYPE) || tp->tp_base != &PyBaseObject_Type || tp->tp_itemsize != 0
        || tp->tp_dictoffset != 0 || tp->tp_weaklistoffset != 0 || tp->tp_members == NULL
        || tp->tp_basicsize != (Py_ssize_t)(sizeof(PyObject) + n * sizeof(PyObject *))) {
        PyErr_SetString(PyExc_TypeError, "make: a class of __slots__ only, on object");
        return NULL;
    }
    while (tp->tp_members[members].name != NULL) members++;
    if (members != n) {
        PyErr_Format(PyExc_TypeError, "make: %s has %zd slots, %zd given", tp->tp_name, members, n);
        return NULL;
    }
    for (i = 0; i < n; i++) {
        PyObject *d = PyTuple_GET_ITEM(slots, i);
        if (!Py_IS_TYPE(d, &PyMemberDescr_Type) || PyDescr_TYPE(d) != tp) break;
        PyMemberDef *m = ((PyMemberDescrObject *)d)->d_member;
        if (m->type != T_OBJECT_EX || (m->flags & READONLY) || m->offset < (Py_ssize_t)sizeof(PyObject)
            || m->offset > tp->tp_basicsize - (Py_ssize_t)sizeof(PyObject *))
            break;
    }
    if (i < n) {
        PyErr_Format(PyExc_TypeError, "make: slot %zd is not a writable object slot of %s", i, tp->tp_name);
        return NULL;
    }
    PyObject *obj = tp->tp_alloc(tp, 0);  /* zeroed: every slot NULL */
    if (obj == NULL) return NULL;
    for (i = 0; i < n; i++) {
        PyObject **at = (PyObject **)((char *)obj + ((PyMemberDescrObject *)PyTuple_GET_ITEM(slots, i))->d_member->offset);
        if (*at != NULL) {  /* a descriptor given twice */
            Py_DECREF(obj);
            PyErr_Format(PyExc_TypeError, "make: slot %zd of %s given twice", i, tp->tp_name);
            return NULL;
        }
        PyObject *v = PyTuple_GET_ITEM(values, i);
        Py_INCREF(v);
        *at = v;
    }
    return obj;
}

static PyMethodDef METHODS[] = {
    {"decode", native_decode, METH_O, decode_doc},
    {"split_block", native_split_block, METH_VARARGS, split_doc},
    {"configure", native_configure, METH_VARARGS, configure_doc},
    {"make", (PyCFunction)(void (*)(void))native_make, METH_FASTCALL, make_doc},
    {"field_names", def_names, METH_O, "The field names this core gives a fast type, in order (for tests)."},
    {NULL, NULL, 0, NULL}};

static struct PyModuleDef MODULE = {PyModuleDef_HEAD_INIT, "livefix._native",
                                    "The compiled front of livefix's hot path (see livefix/_native.c).",
                                    -1, METHODS, NULL, NULL, NULL, NULL};

static PyObject *intern(const char *s)
{
    PyObject *u = PyUnicode_InternFromString(s);
    return u;
}

PyMODINIT_FUNC PyInit__native(void)
{
    PyDateTime_IMPORT;
    if (PyDateTimeAPI == NULL) return NULL;
    memset(TALKER, -1, sizeof TALKER);
    EMPTY = PyUnicode_New(0, 0);
    KEY_SIGNAL = intern("signalID");
    if (EMPTY == NULL || KEY_SIGNAL == NULL) return NULL;
    for (int t = 0; t < NTYPES; t++) {
        NS_AT[t] = EW_AT[t] = -1;
        for (int k = 0; k < NDEFS[t]; k++) {
            if ((KEYS[t][k] = intern(DEFS[t][k].name)) == NULL) return NULL;
            if (strcmp(DEFS[t][k].name, "NS") == 0) NS_AT[t] = k;
            if (strcmp(DEFS[t][k].name, "EW") == 0) EW_AT[t] = k;
        }
    }
    static const char *GSV_HEAD[3] = {"numMsg", "msgNum", "numSV"};
    static const char *GSV_BLOCK[4] = {"svid", "elv", "az", "cno"};
    char name[16];
    for (int i = 0; i < 3 + 4 * MAX_BLOCKS; i++) {
        if (i < 3) GSV_KEYS[i] = intern(GSV_HEAD[i]);
        else {
            snprintf(name, sizeof name, "%s_%02d", GSV_BLOCK[(i - 3) % 4], (i - 3) / 4 + 1);
            GSV_KEYS[i] = intern(name);
        }
        if (GSV_KEYS[i] == NULL) return NULL;
    }
    return PyModule_Create(&MODULE);
}
