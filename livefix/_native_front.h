/* livefix._native: what _native_front.c (DecoderFront) and _native_pump.c (LinePump) share. */
#ifndef LIVEFIX_NATIVE_FRONT_H
#define LIVEFIX_NATIVE_FRONT_H

#include "_native.h"

NAT_HIDDEN extern PyTypeObject nat_front_type;
NAT_HIDDEN PyObject *nat_front_decode(PyObject *self, PyObject *line);  /* DecoderFront.decode */
NAT_HIDDEN int nat_front_add(PyObject *mod);  /* both types into the module: from its init */
NAT_HIDDEN int nat_pump_add(PyObject *mod);

#endif
