/* livefix._native: the declarations its source files share (private to the module).
 *
 * The module is built from _native.c (module, framing split), _native_decode.c (the eight hot
 * sentence types: tables, configure(), decode()), _native_fields.c (field conversions) and
 * _native_make.c (make()). Everything shared between them has the nat_ prefix and hidden
 * visibility, so the extension exports nothing but its init function.
 */
#ifndef LIVEFIX_NATIVE_H
#define LIVEFIX_NATIVE_H

#define PY_SSIZE_T_CLEAN
#include <Python.h>

#if defined(__GNUC__) && !defined(_WIN32)
#define NAT_HIDDEN __attribute__((visibility("hidden")))
#else
#define NAT_HIDDEN
#endif

#define MAX_LINE 128   /* the pure inline path's limit (livefix/decode/decoder.py) */
#define MAX_FIELDS 64  /* a 128-byte line has at most 121 payload bytes; more fields than this punts */
#define MAX_BLOCKS 99  /* GSV satellite blocks named with two digits (livefix/decode/fast.py) */
#define MAX_NUM 63     /* longest numeric text converted here; longer ones punt */

/* Result codes of a conversion: an object, or PUNT (the pure path must decide), or an error. */
#define PUNT ((PyObject *)1)

/* conversions of a field's text: time, lat/lon, char (text), int, decimal, date */
enum { C_TM, C_LA, C_CH, C_IN, C_DE, C_DT };

static inline int is_digit(char c) { return c >= '0' && c <= '9'; }

/* _native_fields.c: "" and the two-digit-year pivot (-1: configure() not called yet) */
NAT_HIDDEN extern PyObject *nat_empty;
NAT_HIDDEN extern int nat_yy_pivot;

NAT_HIDDEN int nat_fields_init(void);  /* datetime C API and "": once, from the module init */
NAT_HIDDEN PyObject *nat_new_dict(Py_ssize_t n);
NAT_HIDDEN PyObject *nat_ascii_str(const char *s, Py_ssize_t n);
NAT_HIDDEN PyObject *nat_conv_int(const char *s, Py_ssize_t n);
NAT_HIDDEN int nat_conv_latlon(const char *s, Py_ssize_t n, double *v);
NAT_HIDDEN PyObject *nat_convert(int conv, const char *s, Py_ssize_t n);

/* _native_decode.c */
NAT_HIDDEN int nat_decode_init(void);  /* interned field names: once, from the module init */
NAT_HIDDEN PyObject *nat_decode(PyObject *self, PyObject *arg);
NAT_HIDDEN int nat_decode_parts(PyObject *arg, PyObject **info, PyObject **fields);  /* DecoderFront */
NAT_HIDDEN PyObject *nat_configure(PyObject *self, PyObject *args);
NAT_HIDDEN PyObject *nat_field_names(PyObject *self, PyObject *arg);

/* _native_make.c */
NAT_HIDDEN PyObject *nat_make(PyObject *self, PyObject *const *args, Py_ssize_t nargs);

#endif
