/* tl_crc32c.c - bitwise CRC-32C (see tl_crc32c.h for the parameters). */
#include "tl_crc32c.h"

#define TL_CRC32C_POLY_REFLECTED 0x82F63B78u

static uint32_t crc32c_byte(uint32_t crc, uint8_t b)
{
    crc ^= b;
    for (unsigned i = 0; i < 8u; i++) {
        const uint32_t mask = 0u - (crc & 1u);
        crc = (crc >> 1) ^ (TL_CRC32C_POLY_REFLECTED & mask);
    }
    return crc;
}

uint32_t tl_crc32c_update(uint32_t crc, const uint8_t *data, size_t len)
{
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
