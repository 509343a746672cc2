/* livefix.record._reccore's private header: what the scan (_reccore.c) takes from the CRC file
 * (_reccore_crc.c). */
#ifndef LIVEFIX_RECCORE_H
#define LIVEFIX_RECCORE_H

#define PY_SSIZE_T_CLEAN
#include <Python.h>
#include <stddef.h>
#include <stdint.h>

/* Fills the tables and looks for PCLMULQDQ once (module init); 1 when the folded path is used. */
int rec_crc_init(void);

/* zlib.crc32(p[0:n]); simd 0 keeps to the table (the tests compare both with zlib). */
uint32_t rec_crc32(const unsigned char *p, size_t n, int simd);

#endif
