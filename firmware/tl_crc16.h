/*
 * tl_crc16.h - CRC-16 for the packet error control field and the transfer
 * frame error control field.
 *
 * Parameters (RevEng catalogue name CRC-16/IBM-3740, alias CRC-16/CCITT-FALSE;
 * the CRC of ECSS-E-ST-70-41C packet error control and of the CCSDS 132.0-B
 * frame error control field): polynomial 0x1021 (x^16 + x^12 + x^5 + 1),
 * initial value 0xFFFF, no input or output reflection, no final xor. Check
 * value for the ASCII bytes "123456789" is 0x29B1.
 *
 * On the wire the CRC follows the protected bytes, most significant octet
 * first. Residue property: the CRC of (bytes, CRC high octet, CRC low octet)
 * is 0x0000, so a receiver may run the CRC over the whole field including
 * the CRC and compare with zero.
 *
 * Error detection: with this polynomial every 1-, 2- and 3-bit error is
 * detected for data words up to 32751 bits (Hamming distance 4), which is
 * why space packets here are capped at 4095 octets (see tl_packet.h).
 *
 * Table-driven: one lookup per byte in the 256-entry table tl_crc16_table
 * (512 bytes of const data; entry i is the CRC register after shifting the
 * byte i through a zero register, i.e. (i << 8) run through 8 bitwise
 * steps). tests/test_crc16.c regenerates the table bitwise and compares.
 *
 * Streaming use: c = TL_CRC16_INIT; c = tl_crc16_update(c, p, n) ...;
 * the CRC is c (no final step).
 */
#ifndef TL_CRC16_H
#define TL_CRC16_H

#include <stddef.h>
#include <stdint.h>

#define TL_CRC16_POLY 0x1021u   /* normal (MSB-first) form, x^16 implied */
#define TL_CRC16_INIT 0xFFFFu
#define TL_CRC16_OCTETS 2u      /* size of the CRC on the wire */

/* The 256-entry lookup table (see above). */
extern const uint16_t tl_crc16_table[256];

/* Feed len bytes at data into the running CRC crc and return the new
 * running CRC. data may be NULL only when len is 0. Reads exactly len bytes;
 * never writes anything. */
uint16_t tl_crc16_update(uint16_t crc, const uint8_t *data, size_t len);

/* One-shot CRC of len bytes at data (same rules as tl_crc16_update). */
uint16_t tl_crc16(const uint8_t *data, size_t len);

#endif
