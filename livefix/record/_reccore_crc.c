/* livefix.record._reccore: the CRC-32 of the record scan, the very value zlib.crc32 gives (reflected
 * polynomial 0xEDB88320, register preset and final complement all ones).
 *
 * Table-driven, eight bytes a step; on x86-64 CPUs with PCLMULQDQ the bulk of a payload is folded
 * 64 bytes a step by carry-less multiplication (the published folding method for CRCs of any
 * polynomial: fold 512 bits forward, then 128, then a Barrett reduction; its bit-reflected CRC-32
 * constants are computed from the polynomial, x^k mod P), the rest by the table. The tests and the
 * fuzz compare both ways with zlib.crc32.
 */
#include "_reccore.h"

/* ---- CRC-32 (reflected polynomial 0xEDB88320, as zlib) ----------------------------------------- */

static uint32_t CRC_TABLE[8][256];
static int HAVE_CLMUL = 0;

static void crc_tables(void)
{
    for (uint32_t i = 0; i < 256; i++) {
        uint32_t c = i;
        for (int k = 0; k < 8; k++)
            c = (c & 1) ? (c >> 1) ^ 0xEDB88320u : c >> 1;
        CRC_TABLE[0][i] = c;
    }
    for (int t = 1; t < 8; t++)
        for (int i = 0; i < 256; i++)
            CRC_TABLE[t][i] = (CRC_TABLE[t - 1][i] >> 8) ^ CRC_TABLE[0][CRC_TABLE[t - 1][i] & 0xff];
}

static inline uint32_t le32(const unsigned char *p)
{
    return (uint32_t)p[0] | (uint32_t)p[1] << 8 | (uint32_t)p[2] << 16 | (uint32_t)p[3] << 24;
}

/* reg: the CRC register (the complemented CRC); returns the register after the bytes */
static uint32_t crc_table(uint32_t reg, const unsigned char *p, size_t n)
{
    for (; n >= 8; n -= 8, p += 8) {
        uint32_t a = le32(p) ^ reg, b = le32(p + 4);
        reg = CRC_TABLE[7][a & 0xff] ^ CRC_TABLE[6][(a >> 8) & 0xff] ^ CRC_TABLE[5][(a >> 16) & 0xff]
            ^ CRC_TABLE[4][a >> 24] ^ CRC_TABLE[3][b & 0xff] ^ CRC_TABLE[2][(b >> 8) & 0xff]
            ^ CRC_TABLE[1][(b >> 16) & 0xff] ^ CRC_TABLE[0][b >> 24];
    }
    while (n--)
        reg = CRC_TABLE[0][(reg ^ *p++) & 0xff] ^ (reg >> 8);
    return reg;
}

#if defined(__x86_64__) && (defined(__GNUC__) || defined(__clang__))
#define CLMUL_BUILD 1
#include <cpuid.h>
#include <immintrin.h>

/* n >= 64, a multiple of 16; reg as crc_table's. Four 128-bit lanes are folded forward 512 bits a
 * step, then into one lane, then 16 bytes a step, then reduced to 32 bits (Barrett). */
__attribute__((target("pclmul,sse2"))) static uint32_t crc_clmul(uint32_t reg, const unsigned char *p, size_t n)
{
    const __m128i k1k2 = _mm_set_epi64x(0x01c6e41596LL, 0x0154442bd4LL);
    const __m128i k3k4 = _mm_set_epi64x(0x00ccaa009eLL, 0x01751997d0LL);
    const __m128i k5 = _mm_set_epi64x(0, 0x0163cd6124LL);
    const __m128i poly = _mm_set_epi64x(0x01f7011641LL, 0x01db710641LL);
    const __m128i low32 = _mm_setr_epi32(-1, 0, -1, 0);
    __m128i x1 = _mm_loadu_si128((const __m128i *)(p + 0x00));
    __m128i x2 = _mm_loadu_si128((const __m128i *)(p + 0x10));
    __m128i x3 = _mm_loadu_si128((const __m128i *)(p + 0x20));
    __m128i x4 = _mm_loadu_si128((const __m128i *)(p + 0x30));
    __m128i x5, x6, x7, x8;
    x1 = _mm_xor_si128(x1, _mm_cvtsi32_si128((int)reg));
    p += 64;
    n -= 64;
    while (n >= 64) {
        x5 = _mm_clmulepi64_si128(x1, k1k2, 0x00);
        x6 = _mm_clmulepi64_si128(x2, k1k2, 0x00);
        x7 = _mm_clmulepi64_si128(x3, k1k2, 0x00);
        x8 = _mm_clmulepi64_si128(x4, k1k2, 0x00);
        x1 = _mm_clmulepi64_si128(x1, k1k2, 0x11);
        x2 = _mm_clmulepi64_si128(x2, k1k2, 0x11);
        x3 = _mm_clmulepi64_si128(x3, k1k2, 0x11);
        x4 = _mm_clmulepi64_si128(x4, k1k2, 0x11);
        x1 = _mm_xor_si128(_mm_xor_si128(x1, x5), _mm_loadu_si128((const __m128i *)(p + 0x00)));
        x2 = _mm_xor_si128(_mm_xor_si128(x2, x6), _mm_loadu_si128((const __m128i *)(p + 0x10)));
        x3 = _mm_xor_si128(_mm_xor_si128(x3, x7), _mm_loadu_si128((const __m128i *)(p + 0x20)));
        x4 = _mm_xor_si128(_mm_xor_si128(x4, x8), _mm_loadu_si128((const __m128i *)(p + 0x30)));
        p += 64;
        n -= 64;
    }
    /* four lanes into one */
    x5 = _mm_clmulepi64_si128(x1, k3k4, 0x00);
    x1 = _mm_xor_si128(_mm_xor_si128(_mm_clmulepi64_si128(x1, k3k4, 0x11), x2), x5);
    x5 = _mm_clmulepi64_si128(x1, k3k4, 0x00);
    x1 = _mm_xor_si128(_mm_xor_si128(_mm_clmulepi64_si128(x1, k3k4, 0x11), x3), x5);
    x5 = _mm_clmulepi64_si128(x1, k3k4, 0x00);
    x1 = _mm_xor_si128(_mm_xor_si128(_mm_clmulepi64_si128(x1, k3k4, 0x11), x4), x5);
    for (; n >= 16; n -= 16, p += 16) {
        x5 = _mm_clmulepi64_si128(x1, k3k4, 0x00);
        x1 = _mm_xor_si128(_mm_xor_si128(_mm_clmulepi64_si128(x1, k3k4, 0x11),
                                         _mm_loadu_si128((const __m128i *)p)), x5);
    }
    /* 128 bits to 64 */
    x2 = _mm_clmulepi64_si128(x1, k3k4, 0x10);
    x1 = _mm_xor_si128(_mm_srli_si128(x1, 8), x2);
    x2 = _mm_srli_si128(x1, 4);
    x1 = _mm_and_si128(x1, low32);
    x1 = _mm_xor_si128(_mm_clmulepi64_si128(x1, k5, 0x00), x2);
    /* Barrett reduction to 32 bits */
    x2 = _mm_and_si128(x1, low32);
    x2 = _mm_clmulepi64_si128(x2, poly, 0x10);
    x2 = _mm_and_si128(x2, low32);
    x2 = _mm_clmulepi64_si128(x2, poly, 0x00);
    x1 = _mm_xor_si128(x1, x2);
    return (uint32_t)_mm_cvtsi128_si32(_mm_srli_si128(x1, 4));
}

static int clmul_detect(void)
{
    unsigned a, b, c, d;
    return __get_cpuid(1, &a, &b, &c, &d) && (c & bit_PCLMUL) && (d & bit_SSE2);
}
#else
#define CLMUL_BUILD 0
#endif

uint32_t rec_crc32(const unsigned char *p, size_t n, int simd)
{
    uint32_t reg = 0xffffffffu;
#if CLMUL_BUILD
    if (simd && HAVE_CLMUL && n >= 64) {
        size_t bulk = n & ~(size_t)15;
        reg = crc_clmul(reg, p, bulk);
        p += bulk;
        n -= bulk;
    }
#else
    (void)simd;
#endif
    return ~crc_table(reg, p, n);
}

int rec_crc_init(void)
{
    crc_tables();
#if CLMUL_BUILD
    HAVE_CLMUL = clmul_detect();
#endif
    return HAVE_CLMUL;
}
