/*
 * npy.h - write arrays as NumPy .npy files, format version 1.0.
 *
 * Layout (numpy.lib.format documentation; NumPy Enhancement Proposal 1):
 *
 *   offset 0   6 bytes  magic "\x93NUMPY"
 *   offset 6   1 byte   major version = 1
 *   offset 7   1 byte   minor version = 0
 *   offset 8   2 bytes  HEADER_LEN, unsigned, little-endian
 *   offset 10  HEADER_LEN bytes of ASCII: a Python dict literal
 *              {'descr': '<u8', 'fortran_order': False, 'shape': (R,), }
 *              (shape (R, C) for two dimensions), padded with spaces and
 *              ended by '\n' so that 10 + HEADER_LEN is a multiple of 64
 *   then       the elements in C (row-major) order, little-endian
 *
 * Elements are taken from the caller's host-native values and written byte
 * by byte from their numeric value, so the file is the same on a
 * little-endian and a big-endian host.
 */
#ifndef TL_HOST_NPY_H
#define TL_HOST_NPY_H

#include <stddef.h>

/* Alignment of the data after the header, in bytes. */
#define TL_NPY_ALIGN 64u

/* Largest header tl_npy_header can produce (two 20-digit dimensions):
 * a buffer of this size always holds it. */
#define TL_NPY_HEADER_MAX 192u

/* Build the whole header (magic, version, length, dict, padding, '\n') for
 * an array of element type `descr` and shape (rows,) when cols == 0, or
 * (rows, cols) otherwise. descr is one of "<u8" (uint64_t), "<i8"
 * (int64_t), "<f8" (double) or "|u1" (uint8_t).
 * Returns the header length in bytes (a multiple of TL_NPY_ALIGN), and
 * writes it to out only when out is non-NULL and cap >= that length; so
 * tl_npy_header(NULL, 0, ...) asks the length. Returns 0 for an unknown
 * descr. Never writes past out[cap - 1]; out is not NUL-terminated. */
size_t tl_npy_header(char *out, size_t cap, const char *descr, size_t rows, size_t cols);

/* Write `data` (rows elements, or rows * cols in C order, of the host type
 * named by descr as above) to the .npy file `path` through tl_atomic_write:
 * the file appears whole or not at all. data may be NULL only when there
 * are no elements. Returns 0, or -1 with one line in err (cap bytes) naming
 * path: unknown descr, element count overflow, NULL data, or any I/O
 * failure. */
int tl_npy_write(const char *path, const char *descr, size_t rows, size_t cols, const void *data, char *err,
                 size_t cap);

#endif
