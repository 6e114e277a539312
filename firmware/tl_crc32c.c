/* tl_crc32c.c - CRC-32C, four bits per step (see tl_crc32c.h for the parameters). */
#include "tl_crc32c.h"
#if defined(TL_SIMD_X86)
#include "x86/tl_simd_x86.h" /* host build on x86-64 only (Makefile) */
#endif

/* nibble[i] = four bitwise steps of the reflected polynomial 0x82F63B78
 * applied to i: crc = (crc >> 1) ^ (crc & 1 ? 0x82F63B78 : 0), four times.
 * (tests/test_scrub.c compares this with the bitwise definition.) */
static const uint32_t nibble[16] = { 0x00000000u, 0x105EC76Fu, 0x20BD8EDEu, 0x30E349B1u, 0x417B1DBCu, 0x5125DAD3u,
                                     0x61C69362u, 0x7198540Du, 0x82F63B78u, 0x92A8FC17u, 0xA24BB5A6u, 0xB21572C9u,
                                     0xC38D26C4u, 0xD3D3E1ABu, 0xE330A81Au, 0xF36E6F75u };

static uint32_t crc32c_byte(uint32_t crc, uint8_t b)
{
    crc ^= b;
    crc = (crc >> 4) ^ nibble[crc & 15u];
    return (crc >> 4) ^ nibble[crc & 15u];
}

uint32_t tl_crc32c_update(uint32_t crc, const uint8_t *data, size_t len)
{
#if defined(TL_SIMD_X86)
    if (tl_simd_x86_active()) /* SSE4.2 twin, same value */
        return tl_crc32c_update_sse42(crc, data, len);
#endif
    for (size_t i = 0; i < len; i++)
        crc = crc32c_byte(crc, data[i]);
    return crc;
}

uint32_t tl_crc32c_update_be32(uint32_t crc, uint32_t word)
{
    crc = crc32c_byte(crc, (uint8_t)(word >> 24));
    crc = crc32c_byte(crc, (uint8_t)(word >> 16));
    crc = crc32c_byte(crc, (uint8_t)(word >> 8));
    return crc32c_byte(crc, (uint8_t)word);
}

uint32_t tl_crc32c(const uint8_t *data, size_t len)
{
    return tl_crc32c_final(tl_crc32c_update(TL_CRC32C_INIT, data, len));
}
