# tidelock - `make help` lists the targets.
.DEFAULT_GOAL := all
.SECONDARY:
SHELL := /bin/bash

CC ?= cc
BUILD := build

# Flight code: C11, freestanding, warnings are errors.
FW_CFLAGS := -std=c11 -O2 -g -ffreestanding -Wall -Wextra -Wconversion -Wshadow -Wpedantic \
             -Wdouble-promotion -Wfloat-equal -Wcast-align -Wstrict-prototypes -Werror
# Host code: hosted C11 with POSIX; -ffp-contract=off keeps the float reference
# bit-reproducible (no fused multiply-adds chosen by the compiler).
HOST_CFLAGS := -std=c11 -O2 -g -D_DEFAULT_SOURCE -Wall -Wextra -Wshadow -Werror -ffp-contract=off
INCLUDES := -Ifirmware -Ihost
HOST_LIBS := -lfftw3 -ljansson -linih -llz4 -lcairo -lfontconfig -lm
TEST_LIBS := -lcmocka

FW_SRC := $(sort $(wildcard firmware/*.c))
# AVX2 twins of the hot loops (firmware/x86/tl_simd_x86.h): host library on
# x86-64 only; TL_SIMD_X86 lets the rel and san firmware call them (chosen at
# run time). Never in the purity check, the cross targets or the flight code.
ifeq ($(shell uname -m),x86_64)
FW_SIMD_SRC := firmware/x86/tl_simd_avx2.c
FW_SIMD_DEF := -DTL_SIMD_X86
endif
HOST_LIB_SRC := $(filter-out host/tidelock_main.c host/tablegen_main.c host/bench_main.c,$(sort $(wildcard host/*.c)))
TEST_SRC := $(sort $(wildcard tests/test_*.c))
TEST_SUPPORT_SRC := $(filter-out $(TEST_SRC) tests/degraded_%.c,$(sort $(wildcard tests/*.c)))
TESTS := $(patsubst tests/%.c,%,$(TEST_SRC))

# $(call objs,VARIANT,SOURCES)
objs = $(patsubst %.c,$(BUILD)/$(1)/%.o,$(2))

# ---- variants -------------------------------------------------------------
# rel: normal build; san: AddressSanitizer + UndefinedBehaviorSanitizer;
# deg: firmware with a 16-bit FFT data word (must fail the fidelity tests).
SAN_FLAGS := -fsanitize=address,undefined -fno-sanitize-recover=all -fno-omit-frame-pointer
rel_FW := $(FW_CFLAGS) $(FW_SIMD_DEF)
rel_HOST := $(HOST_CFLAGS)
rel_LD :=
san_FW := $(FW_CFLAGS) $(FW_SIMD_DEF) $(SAN_FLAGS) -O1
san_HOST := $(HOST_CFLAGS) $(SAN_FLAGS) -O1
san_LD := $(SAN_FLAGS)
deg_FW := $(FW_CFLAGS) -DTL_FFT_DATA_BITS=16
deg_HOST := $(HOST_CFLAGS) -DTL_FFT_DATA_BITS=16
deg_LD :=

define variant
$(BUILD)/$(1)/firmware/%.o: firmware/%.c $(wildcard firmware/*.h firmware/x86/*.h) | $(BUILD)/$(1)/firmware
	@mkdir -p $$(@D)
	$$(CC) $$($(1)_FW) $$(INCLUDES) -c $$< -o $$@
$(BUILD)/$(1)/host/%.o: host/%.c $(wildcard firmware/*.h host/*.h) | $(BUILD)/$(1)/host
	$$(CC) $$($(1)_HOST) $$(INCLUDES) -c $$< -o $$@
$(BUILD)/$(1)/tests/%.o: tests/%.c $(wildcard firmware/*.h host/*.h tests/*.h) | $(BUILD)/$(1)/tests
	$$(CC) $$($(1)_HOST) $$(INCLUDES) -Itests -c $$< -o $$@
$(BUILD)/$(1)/firmware $(BUILD)/$(1)/host $(BUILD)/$(1)/tests:
	mkdir -p $$@
$(BUILD)/$(1)/libtl.a: $(call objs,$(1),$(FW_SRC) $(FW_SIMD_SRC) $(HOST_LIB_SRC))
	rm -f $$@ && ar rcs $$@ $$^
$(BUILD)/$(1)/tidelock: $(BUILD)/$(1)/host/tidelock_main.o $(BUILD)/$(1)/libtl.a
	$$(CC) $$($(1)_LD) $$^ $(HOST_LIBS) -o $$@
$(BUILD)/$(1)/tl-bench: $(BUILD)/$(1)/host/bench_main.o $(BUILD)/$(1)/libtl.a
	$$(CC) $$($(1)_LD) $$^ $(HOST_LIBS) -o $$@
$(BUILD)/$(1)/test_%: $(BUILD)/$(1)/tests/test_%.o $(call objs,$(1),$(TEST_SUPPORT_SRC)) $(BUILD)/$(1)/libtl.a
	$$(CC) $$($(1)_LD) $$^ $(TEST_LIBS) $(HOST_LIBS) -o $$@
endef
$(eval $(call variant,rel))
$(eval $(call variant,san))
$(eval $(call variant,deg))

# the must-fail test exists only in the degraded variant
$(BUILD)/deg/test_degraded: $(BUILD)/deg/tests/degraded_must_fail.o $(call objs,deg,$(TEST_SUPPORT_SRC)) $(BUILD)/deg/libtl.a
	$(CC) $^ $(TEST_LIBS) $(HOST_LIBS) -o $@

# ---- firmware purity: no floating point, libm, malloc or stdio -------------
# Compiled once more with -mgeneral-regs-only (x86-64: any float becomes a
# soft-float call), then every undefined symbol must be on the allowlist of
# freestanding support routines.
FW_ALLOWED_UNDEF := memcpy memset memmove memcmp
$(BUILD)/purity/%.o: firmware/%.c $(wildcard firmware/*.h) | $(BUILD)/purity
	$(CC) $(FW_CFLAGS) $(if $(filter x86_64,$(shell uname -m)),-mgeneral-regs-only) -Ifirmware -c $< -o $@
$(BUILD)/purity:
	mkdir -p $@
$(BUILD)/purity/ok: $(patsubst firmware/%.c,$(BUILD)/purity/%.o,$(FW_SRC))
	@ld -r -o $(BUILD)/purity/firmware.o $^
	@bad=$$(nm -u $(BUILD)/purity/firmware.o | awk '{print $$NF}' | grep -vxE '$(subst $(space),|,$(FW_ALLOWED_UNDEF))' || true); \
	if [ -n "$$bad" ]; then echo "firmware purity check FAILED: firmware references: $$(echo $$bad)"; exit 1; fi; \
	echo "firmware purity: $(words $^) objects reference nothing beyond $(FW_ALLOWED_UNDEF)"; touch $@
space := $(subst ,, )

# ---- tables ---------------------------------------------------------------
$(BUILD)/tl-tablegen: host/tablegen_main.c host/tables_gen.c host/taps_design.c host/atomic_file.c firmware/tl_taps.c firmware/tl_crc32c.c
	mkdir -p $(BUILD)
	$(CC) $(HOST_CFLAGS) $(INCLUDES) $^ -lm -o $@

# ---- install ----------------------------------------------------------------
PREFIX ?= /usr/local
DESTDIR ?=
VERSION := $(shell sed -n 's/^\#define TL_TOOL_VERSION "\(.*\)"/\1/p' host/version.h)
FW_LIB := $(BUILD)/rel/libtidelock-firmware.a
$(FW_LIB): $(call objs,rel,$(FW_SRC) $(FW_SIMD_SRC))
	rm -f $@ && ar rcs $@ $^

install: all $(FW_LIB) ## install the CLI, firmware library, headers, pkg-config file, man page (PREFIX=, DESTDIR=)
	install -d $(DESTDIR)$(PREFIX)/bin $(DESTDIR)$(PREFIX)/lib/pkgconfig $(DESTDIR)$(PREFIX)/include/tidelock \
	    $(DESTDIR)$(PREFIX)/share/man/man1
	install -m 755 $(BUILD)/rel/tidelock $(DESTDIR)$(PREFIX)/bin/tidelock
	install -m 644 $(FW_LIB) $(DESTDIR)$(PREFIX)/lib/libtidelock-firmware.a
	install -m 644 firmware/*.h $(DESTDIR)$(PREFIX)/include/tidelock/
	install -m 644 docs/tidelock.1 $(DESTDIR)$(PREFIX)/share/man/man1/tidelock.1
	sed -e 's|@PREFIX@|$(PREFIX)|' -e 's|@VERSION@|$(VERSION)|' firmware/tidelock-firmware.pc.in \
	    > $(DESTDIR)$(PREFIX)/lib/pkgconfig/tidelock-firmware.pc

# ---- user targets ---------------------------------------------------------
.PHONY: all run test test-rel test-san test-deg purity tables deps help clean install bench
all: $(BUILD)/rel/tidelock $(BUILD)/purity/ok ## build the CLI and check firmware purity
	ln -sf rel/tidelock $(BUILD)/tidelock

deps: ## install missing Debian packages (uses sudo when not root)
	bash .ci/deps.sh

run: deps all ## install packages, build, run the default scenario into out/
	$(BUILD)/tidelock run -o out

REL_TESTS := $(addprefix $(BUILD)/rel/,$(TESTS))
SAN_TESTS := $(addprefix $(BUILD)/san/,$(TESTS))
SAN_ENV := ASAN_OPTIONS=detect_leaks=1:abort_on_error=0 UBSAN_OPTIONS=print_stacktrace=1:halt_on_error=1

# Binaries build in parallel (make -j2 test); suites run one after another.
test: all $(REL_TESTS) $(SAN_TESTS) $(BUILD)/san/tidelock $(BUILD)/deg/test_degraded ## every test, the must-fail build, then all again under ASan+UBSan
	@rm -f $(BUILD)/tally; \
	TL_TALLY=$(BUILD)/tally bash tests/run_suite.sh $(BUILD)/rel $(TESTS); r1=$$?; \
	TL_TALLY=$(BUILD)/tally bash tests/run_suite.sh $(BUILD)/deg test_degraded; r2=$$?; \
	TL_TALLY=$(BUILD)/tally $(SAN_ENV) bash tests/run_suite.sh $(BUILD)/san $(TESTS); r3=$$?; \
	awk '{p+=$$1; f+=$$2} END {printf "all suites: %d passed, %d failed\n", p, f}' $(BUILD)/tally; \
	[ $$r1 -eq 0 ] && [ $$r2 -eq 0 ] && [ $$r3 -eq 0 ]

test-rel: $(REL_TESTS) $(BUILD)/rel/tidelock $(BUILD)/purity/ok ## the tests, release build only
	@bash tests/run_suite.sh $(BUILD)/rel $(TESTS)

test-san: $(SAN_TESTS) $(BUILD)/san/tidelock ## the tests under ASan+UBSan only
	@$(SAN_ENV) bash tests/run_suite.sh $(BUILD)/san $(TESTS)

test-deg: $(BUILD)/deg/test_degraded ## the must-fail degraded build only
	@bash tests/run_suite.sh $(BUILD)/deg test_degraded

tables: $(BUILD)/tl-tablegen ## regenerate the committed firmware tables
	$(BUILD)/tl-tablegen twiddle firmware/tl_twiddle_table.c
	$(BUILD)/tl-tablegen taps firmware/tl_taps_default.c

BENCH_GIB ?= 2
bench: $(BUILD)/rel/tl-bench $(BUILD)/rel/tidelock ## speed and memory table (BENCH_GIB=2: size of the replayed recording, 0 skips)
	$(BUILD)/rel/tl-bench --tidelock $(BUILD)/rel/tidelock --replay-gib $(BENCH_GIB) --json $(BUILD)/bench.json

purity: $(BUILD)/purity/ok ## check firmware objects for float/libm/malloc/stdio

clean: ## remove build products
	rm -rf $(BUILD)

help: ## list targets
	@grep -hE '^[a-z-]+:.*## ' $(MAKEFILE_LIST) | sed -E 's/:.*## /\t/' | expand -t 10

# ---- cross-target builds and golden vectors ----------------------------------------
# The vector runner for the host, the Cortex-M7 (QEMU) and big-endian PowerPC
# (qemu-ppc), the Cortex-M7 memory budget and image checks, `make cross`.
# tests/test_cross.c (in every suite) compares all vectors on all three.
include hil/targets.mk
# ---- end of cross-target block ------------------------------------------------------

# ---- tests/test_command.c runs the link target (hil/) in process ---------------------
CMD_HIL_SRC := hil/hil_run.c hil/link_target.c
define cmd_test
$(BUILD)/$(1)/test_command: $(call objs,$(1),tests/test_command.c $(TEST_SUPPORT_SRC) $(CMD_HIL_SRC)) $(BUILD)/$(1)/libtl.a
	$$(CC) $$($(1)_LD) $$^ $(TEST_LIBS) $(HOST_LIBS) -o $$@
$(BUILD)/$(1)/hil/%.o: hil/%.c $(wildcard firmware/*.h hil/*.h)
	@mkdir -p $$(@D)
	$$(CC) $$($(1)_FW) -Ifirmware -Ihil -c $$< -o $$@
endef
$(foreach v,rel san cov,$(eval $(call cmd_test,$(v))))
# ---- fuzzing and analysis gates (tests/fuzz/fuzz.mk; docs/faults.md) --------------
include tests/fuzz/fuzz.mk
# ---- end of fuzzing and analysis block ----------------------------------------------
