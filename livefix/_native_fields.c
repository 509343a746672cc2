/* livefix._native: conversion of one field's text to the value the pure path makes (parse_time,
 * parse_date, parse_latlon, int(), float() on the plain forms; PUNT for anything else).
 *
 * No buffer is written beyond a fixed bound: fields are read in place from the line's bytes, and the
 * only copy (a float's text, in plain_double) is length-checked against MAX_NUM.
 */
#include "_native.h"
#include <datetime.h>  /* its C API pointer is per file: only this file makes dates and times */
#include <float.h>  /* FLT_EVAL_METHOD */
#include <math.h>
#include <string.h>

PyObject *nat_empty;      /* "" */
int nat_yy_pivot = -1;    /* -1: configure() not called yet */

int nat_fields_init(void)
{
    PyDateTime_IMPORT;
    if (PyDateTimeAPI == NULL) return -1;
    nat_empty = PyUnicode_New(0, 0);
    return nat_empty == NULL ? -1 : 0;
}

static int all_digits(const char *s, Py_ssize_t n)
{
    for (Py_ssize_t i = 0; i < n; i++)
        if (!is_digit(s[i])) return 0;
    return 1;
}

/* A dict sized for n keys up front (no resize while filling); private API, public fallback. */
PyObject *nat_new_dict(Py_ssize_t n)
{
#if PY_VERSION_HEX < 0x030D0000
    return _PyDict_NewPresized(n);
#else
    (void)n;
    return PyDict_New();
#endif
}

PyObject *nat_ascii_str(const char *s, Py_ssize_t n)
{
    if (n == 0) { Py_INCREF(nat_empty); return nat_empty; }
    if (n == 1) return PyUnicode_FromStringAndSize(s, 1);  /* the interpreter's one-character singletons */
    PyObject *u = PyUnicode_New(n, 127);
    if (u != NULL) memcpy(PyUnicode_DATA(u), s, (size_t)n);
    return u;
}

/* int(s) for [+-]?[0-9]{1,18}; "" -> "" */
PyObject *nat_conv_int(const char *s, Py_ssize_t n)
{
    if (n == 0) { Py_INCREF(nat_empty); return nat_empty; }
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

/* Exact doubles for the short path below: 10^0..10^22 are all exactly representable. */
static const double POW10[23] = {1e0, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10, 1e11,
                                 1e12, 1e13, 1e14, 1e15, 1e16, 1e17, 1e18, 1e19, 1e20, 1e21, 1e22};
#define EXACT_INT_MAX 9007199254740992ULL  /* 2^53: every integer up to it is a double */

/* The text of a plain decimal [+-]?[0-9]*(.[0-9]*)? with at least one digit -> double, exactly as
 * float(). 0 when not plain.
 *
 * Short texts (digits as an integer m <= 2^53, at most 22 decimals) take m / 10^k: both operands
 * are exact doubles and one IEEE division (round to nearest) is correctly rounded, so this is the
 * one correctly rounded value: the same bits as the interpreter's PyOS_string_to_double, which is
 * correctly rounded too (its own fast case is this division, for up to 15 digits). Why: on x86
 * builds that routine switches the x87 control word around every call, and the switch cost more
 * than the rest of a GGA's decoding. Needs doubles evaluated as doubles (FLT_EVAL_METHOD 0: SSE2,
 * ARM, ...); elsewhere, and for longer texts, the interpreter's routine itself is called. */
static int plain_double(const char *s, Py_ssize_t n, double *out)
{
    char buf[MAX_NUM + 1];
    Py_ssize_t i = 0, digits = 0, frac = 0;
    int dot = 0, neg = 0;
    unsigned long long m = 0;
    if (n < 1 || n > MAX_NUM) return 0;
    if (s[0] == '-' || s[0] == '+') { neg = s[0] == '-'; i = 1; }
    for (; i < n; i++) {
        if (is_digit(s[i])) {
            digits++;
            frac += dot;
            if (m <= EXACT_INT_MAX) m = m * 10 + (unsigned)(s[i] - '0');  /* no wrap: m <= 2^53 before */
        } else if (s[i] == '.' && !dot) dot = 1;
        else return 0;
    }
    if (!digits) return 0;
#if defined(FLT_EVAL_METHOD) && FLT_EVAL_METHOD == 0
    if (m <= EXACT_INT_MAX && frac <= 22) {
        double v = (double)m / POW10[frac];
        *out = neg ? -v : v;
        return 1;
    }
#endif
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
    if (n == 0) { Py_INCREF(nat_empty); return nat_empty; }
    if (!plain_double(s, n, &v)) return PUNT;
    return PyFloat_FromDouble(v);
}

/* parse_time: hhmmss or hhmmss.f{1,6} with a valid clock -> datetime.time; "" -> "" */
static PyObject *conv_time(const char *s, Py_ssize_t n)
{
    if (n == 0) { Py_INCREF(nat_empty); return nat_empty; }
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
    if (n == 0) { Py_INCREF(nat_empty); return nat_empty; }
    if (n != 6 || !all_digits(s, 6)) return PUNT;
    int dd = (s[0] - '0') * 10 + (s[1] - '0'), mo = (s[2] - '0') * 10 + (s[3] - '0');
    int yy = (s[4] - '0') * 10 + (s[5] - '0');
    if (dd < 1 || dd > 31 || mo < 1 || mo > 12) return PUNT;
    int year = yy + (yy <= nat_yy_pivot ? 2000 : 1900);
    if (dd > MDAYS[mo - 1] + (mo == 2 && is_leap(year))) { Py_INCREF(nat_empty); return nat_empty; }
    return PyDate_FromDate(year, mo, dd);
}

/* parse_latlon: (d)ddmm.mmmm -> unsigned degrees (the sign comes later). Returns 1 with *v set,
 * 0 for "" (no '.' at index >= 4), -1 to punt (unusual digits, or a near-tie the pure path rounds). */
int nat_conv_latlon(const char *s, Py_ssize_t n, double *v)
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

PyObject *nat_convert(int conv, const char *s, Py_ssize_t n)
{
    switch (conv) {
    case C_CH: return nat_ascii_str(s, n);
    case C_IN: return nat_conv_int(s, n);
    case C_DE: return conv_float(s, n);
    case C_TM: return conv_time(s, n);
    case C_DT: return conv_date(s, n);
    default: return PUNT;
    }
}

