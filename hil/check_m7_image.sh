#!/usr/bin/env bash
# check_m7_image.sh FILE - what the Cortex-M7 image must not contain.
# FILE is the linked image (or an object). Prints one line per finding and
# exits 1 if there is any:
#   float: a floating-point instruction (VFP/NEON mnemonics begin with 'v';
#          also coprocessor 10/11 access), in the disassembly;
#   soft-float: a call or definition of a soft-float routine of the Arm
#          run-time ABI (__aeabi_f*, __aeabi_d*, int <-> float conversions)
#          or of libgcc (__addsf3, __floatsidf, ...), or of libm;
#   heap: the allocator or its system call (malloc, free, _sbrk, ...);
#   stdio: the C library's formatted or stream output.
# The checks read the symbol table (defined and undefined) and the
# disassembly (arm-none-eabi-nm, arm-none-eabi-objdump).
set -u
f=$1
nm=${NM:-arm-none-eabi-nm}
objdump=${OBJDUMP:-arm-none-eabi-objdump}
found=0
syms=$($nm "$f" | awk '{print $NF}' | sort -u) || { echo "$f: cannot read its symbols"; exit 1; }
report() { # category regex
    local hits
    hits=$(grep -E "$2" <<<"$syms" | tr '\n' ' ')
    if [ -n "$hits" ]; then
        echo "$f: $1: $hits"
        found=1
    fi
}
report soft-float '^__aeabi_(f|d)[a-z0-9]+$|^__aeabi_u?[il]2[fd]$|^__aeabi_[fd]2u?[il]z?$|^__(add|sub|mul|div|neg|cmp|eq|ne|lt|le|gt|ge|unord)[sdt]f[23]$|^__(float|fix|fixuns|extend|trunc)[a-z]*[sdt]f[a-z0-9]*$'
report libm '^(sqrt|sin|cos|tan|atan2?|exp|log|log10|log2|pow|floor|ceil|fabs|fmod|round|lround|rint|hypot)f?$'
report heap '^_?(malloc|free|calloc|realloc|memalign|aligned_alloc|posix_memalign)(_r)?$|^_?sbrk(_r)?$'
report stdio '^_?(printf|fprintf|sprintf|snprintf|vprintf|vfprintf|puts|fputs|fwrite|fopen|_vfprintf_r|_printf_r)$'
fp=$($objdump -d "$f" | awk -F'\t' 'NF >= 3 && ($3 ~ /^v[a-z]/ || $0 ~ /(mrc|mcr|ldc|stc)2?[a-z.]*[ \t]+p1[01],/) {print $3}' | sort | uniq -c | sort -rn | head -5 | awk '{printf "%s x%s ", $2, $1}')
if [ -n "$fp" ]; then
    echo "$f: float: instructions $fp"
    found=1
fi
exit $found
