/* livefix._native: decoding of the eight hot sentence types. decode() checks the plain common shape
 * of a line (ASCII, at most MAX_LINE bytes, "$TTMMM," header of a fast type and accepted talker,
 * "*hh" that verifies), splits the payload in the same pass and builds the fields dict from the
 * tables below, with the same keys in the same order as the pure path; anything unusual returns
 * None so the caller runs the pure-Python reference for that line. configure() hands over the
 * accepted talkers and the year pivot from the Python side.
 */
#include "_native.h"
#include <math.h>
#include <string.h>

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

/* Set once: the interned key strings at import (nat_decode_init), the accepted talkers and the
 * header tuples by configure(). */
static PyObject *KEYS[NTYPES][32];
static PyObject *GSV_KEYS[3 + 4 * MAX_BLOCKS];
static PyObject *KEY_SIGNAL;
static signed char TALKER[128][128];    /* talker -> index into INFO, -1 when not accepted */
static PyObject **INFO;                 /* [talker * NTYPES + type] -> (header, talker, msg_id) */
static int NTALKERS;

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
            int r = nat_conv_latlon(fs[k], fl[k], &coord[k]);
            if (r < 0) v = PUNT;
            else if (r == 0) { Py_INCREF(nat_empty); v = nat_empty; }
            else v = Py_None;  /* placeholder: made a float once the hemisphere is known */
        } else {
            v = nat_convert(def[k].conv, fs[k], fl[k]);
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
    PyObject *d = nat_new_dict(m);
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
    PyObject *d = nat_new_dict(m + 1);
    if (d == NULL) return NULL;
    for (int i = 0; i < m; i++) {
        PyObject *v = nat_conv_int(fs[i], fl[i]);  /* C/N0 with decimals punts: the pure path keeps them */
        if (v == NULL || v == PUNT) { Py_DECREF(d); return v; }
        int r = PyDict_SetItem(d, GSV_KEYS[i], v);
        Py_DECREF(v);
        if (r < 0) { Py_DECREF(d); return NULL; }
    }
    if (nf >= 3 && m < nf) {
        PyObject *v = nat_ascii_str(fs[m], fl[m]);
        if (v == NULL || PyDict_SetItem(d, KEY_SIGNAL, v) < 0) { Py_XDECREF(v); Py_DECREF(d); return NULL; }
        Py_DECREF(v);
    }
    return d;
}

/* decode()'s work without its result pair (DecoderFront reads the two parts): 1 with *info (borrowed)
 * and *fields (new), 0 when the line is declined, -1 on error */
int nat_decode_parts(PyObject *arg, PyObject **info, PyObject **fields)
{
    if (nat_yy_pivot < 0) { PyErr_SetString(PyExc_RuntimeError, "livefix._native: configure() first"); return -1; }
    if (!PyBytes_CheckExact(arg)) return 0;
    const char *s = PyBytes_AS_STRING(arg);
    Py_ssize_t n = PyBytes_GET_SIZE(arg);
    if (n < 10 || n > MAX_LINE || s[0] != '$' || s[6] != ',' || s[n - 3] != '*') return 0;
    unsigned char a = (unsigned char)s[1], b = (unsigned char)s[2];
    if (a >= 128 || b >= 128 || TALKER[a][b] < 0) return 0;
    int t = type_of(s + 3);
    int h1 = hexval(s[n - 2]), h2 = hexval(s[n - 1]);
    if (t < 0 || h1 < 0 || h2 < 0) return 0;
    /* ASCII, no '*' in the payload, checksum; split the payload in the same pass */
    const char *fs[MAX_FIELDS];
    Py_ssize_t fl[MAX_FIELDS];
    int nf = 0;
    unsigned x = 0;
    Py_ssize_t i, start = 7, star = n - 3;
    for (i = 1; i < 7; i++) x ^= (unsigned char)s[i];
    for (i = 7; i < star; i++) {
        unsigned char c = (unsigned char)s[i];
        if (c >= 128 || c == '*') return 0;
        x ^= c;
        if (c == ',') {
            if (nf >= MAX_FIELDS - 1) return 0;
            fs[nf] = s + start; fl[nf] = i - start; nf++;
            start = i + 1;
        }
    }
    fs[nf] = s + start; fl[nf] = star - start; nf++;
    if (x != (unsigned)(h1 << 4 | h2)) return 0;
    PyObject *f = t == T_GSV ? gsv_fields(fs, fl, nf) : plan_fields(t, fs, fl, nf);
    if (f == NULL) return -1;
    if (f == PUNT) return 0;
    *info = INFO[TALKER[a][b] * NTYPES + t];
    *fields = f;
    return 1;
}

PyObject *nat_decode(PyObject *self, PyObject *arg)
{
    (void)self;
    PyObject *info, *fields;
    int r = nat_decode_parts(arg, &info, &fields);
    if (r <= 0) return r < 0 ? NULL : Py_NewRef(Py_None);
    PyObject *out = PyTuple_New(2);
    if (out == NULL) { Py_DECREF(fields); return NULL; }
    PyTuple_SET_ITEM(out, 0, Py_NewRef(info));
    PyTuple_SET_ITEM(out, 1, fields);
    return out;
}

PyObject *nat_configure(PyObject *self, PyObject *args)
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
    nat_yy_pivot = pivot;
    Py_RETURN_NONE;
}

PyObject *nat_field_names(PyObject *self, PyObject *arg)
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

/* The interned field names and the empty talker table; once, from the module init. */
int nat_decode_init(void)
{
    memset(TALKER, -1, sizeof TALKER);
    KEY_SIGNAL = PyUnicode_InternFromString("signalID");
    if (KEY_SIGNAL == NULL) return -1;
    for (int t = 0; t < NTYPES; t++) {
        NS_AT[t] = EW_AT[t] = -1;
        for (int k = 0; k < NDEFS[t]; k++) {
            if ((KEYS[t][k] = PyUnicode_InternFromString(DEFS[t][k].name)) == NULL) return -1;
            if (strcmp(DEFS[t][k].name, "NS") == 0) NS_AT[t] = k;
            if (strcmp(DEFS[t][k].name, "EW") == 0) EW_AT[t] = k;
        }
    }
    static const char *GSV_HEAD[3] = {"numMsg", "msgNum", "numSV"};
    static const char *GSV_BLOCK[4] = {"svid", "elv", "az", "cno"};
    char name[16];
    for (int i = 0; i < 3 + 4 * MAX_BLOCKS; i++) {
        if (i < 3) GSV_KEYS[i] = PyUnicode_InternFromString(GSV_HEAD[i]);
        else {
            snprintf(name, sizeof name, "%s_%02d", GSV_BLOCK[(i - 3) % 4], (i - 3) / 4 + 1);
            GSV_KEYS[i] = PyUnicode_InternFromString(name);
        }
        if (GSV_KEYS[i] == NULL) return -1;
    }
    return 0;
}
