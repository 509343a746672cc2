/* livefix._native: what _native_front.c (DecoderFront) and _native_pump.c (LinePump) share. */
#ifndef LIVEFIX_NATIVE_FRONT_H
#define LIVEFIX_NATIVE_FRONT_H

#include "_native.h"

NAT_HIDDEN extern PyTypeObject nat_front_type;
NAT_HIDDEN PyObject *nat_front_decode(PyObject *self, PyObject *line);  /* DecoderFront.decode */
NAT_HIDDEN int nat_front_add(PyObject *mod);  /* both types into the module: from its init */
NAT_HIDDEN int nat_pump_add(PyObject *mod);
/* split_block(data, max_len), the framer's plain-block split (_native.c), and its body for the pump */
NAT_HIDDEN PyObject *nat_split_block(PyObject *self, PyObject *args);
NAT_HIDDEN PyObject *nat_split(PyObject *data, Py_ssize_t max_len);

#endif
