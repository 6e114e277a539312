# hil/targets.mk - the vector runner built for every target (included by
# the Makefile; docs/targets.md is the long form).
#
#   $(BUILD)/hil/host/vector-runner       the host build (the rel firmware objects)
#   $(BUILD)/hil/m7/vector-runner.elf     bare-metal Cortex-M7, run under qemu-system-arm
#   $(BUILD)/hil/ppc/vector-runner        32-bit big-endian PowerPC Linux, run under qemu-ppc
# and the link target (the link protocol on stdin/stdout, or on the
# Cortex-M7's UART) for the same three: .../link-target, link-target.elf.
#
# The Cortex-M7 image is checked after linking: code and static RAM against
# their budgets, and no floating point, soft-float call, libm, heap or stdio
# (hil/check_m7_image.sh, which must also reject two deliberately wrong
# probes). A missing cross tool stops the build with a message, never a skip.

HIL_B := $(BUILD)/hil
HIL_COMMON := hil/hil_run.c hil/vector_runner.c
HIL_HEADERS := $(wildcard firmware/*.h hil/*.h hil/m7/*.h)
HIL_RUNNERS := $(HIL_B)/host/vector-runner $(HIL_B)/m7/vector-runner.elf $(HIL_B)/ppc/vector-runner \
               $(HIL_B)/host/link-target $(HIL_B)/m7/link-target.elf $(HIL_B)/ppc/link-target \
               $(HIL_B)/m7/image-ok $(HIL_B)/ppc/format-ok
HIL_TOOLS := arm-none-eabi-gcc arm-none-eabi-size arm-none-eabi-nm arm-none-eabi-objdump qemu-system-arm \
             powerpc-linux-gnu-gcc powerpc-linux-gnu-readelf qemu-ppc

# Cortex-M7: no FPU use at all (soft-float ABI, the FPU never enabled), and
# maxima lowered so the static RAM fits the budget (host/vectors.h names the
# same maxima for the manifest; tests/test_cross.c checks they agree).
M7_CC := arm-none-eabi-gcc
M7_ARCH := -mcpu=cortex-m7 -mthumb -mfloat-abi=soft
M7_MAXIMA := -DTL_MAX_POINTS=4096u -DTL_MAX_TAPS=4u
M7_CFLAGS := $(FW_CFLAGS) $(M7_ARCH) $(M7_MAXIMA) -ffunction-sections -fdata-sections
M7_RAM_BUDGET := 1048576
M7_CODE_BUDGET := 524288
M7_SRC := hil/m7/startup.c hil/m7/semihost.c

PPC_CC := powerpc-linux-gnu-gcc
PPC_IO_CFLAGS := -std=c11 -O2 -g -D_DEFAULT_SOURCE -Wall -Wextra -Wshadow -Werror

$(HIL_B)/tools-ok:
	@mkdir -p $(@D); missing=""; \
	for t in $(HIL_TOOLS); do command -v $$t >/dev/null || missing="$$missing $$t"; done; \
	if [ -n "$$missing" ]; then \
	    echo "cross-target build FAILED: missing tools:$$missing (bash .ci/deps.sh installs them)"; exit 1; fi; \
	touch $@

# ---- host ----
$(HIL_B)/host/%.o: hil/%.c $(HIL_HEADERS)
	@mkdir -p $(@D)
	$(CC) $(FW_CFLAGS) -Ifirmware -Ihil -c $< -o $@
$(HIL_B)/host/io_posix.o: hil/io_posix.c hil/runner_io.h
	@mkdir -p $(@D)
	$(CC) $(HOST_CFLAGS) -Ihil -c $< -o $@
$(HIL_B)/host/vector-runner: $(patsubst hil/%.c,$(HIL_B)/host/%.o,$(HIL_COMMON)) $(HIL_B)/host/io_posix.o \
                             $(call objs,rel,$(FW_SRC) $(FW_SIMD_SRC))
	$(CC) $^ -o $@
$(HIL_B)/host/link_posix.o: hil/link_posix.c $(HIL_HEADERS)
	@mkdir -p $(@D)
	$(CC) $(HOST_CFLAGS) -Ifirmware -Ihil -c $< -o $@
$(HIL_B)/host/link-target: $(HIL_B)/host/hil_run.o $(HIL_B)/host/link_target.o $(HIL_B)/host/link_posix.o \
                           $(call objs,rel,$(FW_SRC) $(FW_SIMD_SRC))
	$(CC) $^ -o $@

# ---- Cortex-M7 ----
$(HIL_B)/m7/fw/%.o: firmware/%.c $(HIL_HEADERS) | $(HIL_B)/tools-ok
	@mkdir -p $(@D)
	$(M7_CC) $(M7_CFLAGS) -Ifirmware -c $< -o $@
$(HIL_B)/m7/hil/%.o: hil/%.c $(HIL_HEADERS) | $(HIL_B)/tools-ok
	@mkdir -p $(@D)
	$(M7_CC) $(M7_CFLAGS) -Ifirmware -Ihil -c $< -o $@
$(HIL_B)/m7/hil/m7/%.o: hil/m7/%.c $(HIL_HEADERS) | $(HIL_B)/tools-ok
	@mkdir -p $(@D)
	$(M7_CC) $(M7_CFLAGS) -Ifirmware -Ihil -c $< -o $@
M7_FW_OBJS := $(patsubst firmware/%.c,$(HIL_B)/m7/fw/%.o,$(FW_SRC)) \
              $(patsubst hil/%.c,$(HIL_B)/m7/hil/%.o,hil/hil_run.c $(M7_SRC))
M7_OBJS := $(M7_FW_OBJS) $(patsubst hil/%.c,$(HIL_B)/m7/hil/%.o,hil/vector_runner.c hil/m7/io_semihost.c)
M7_LINK_OBJS := $(M7_FW_OBJS) $(patsubst hil/%.c,$(HIL_B)/m7/hil/%.o,hil/link_target.c hil/m7/uart.c hil/m7/link_main.c)
$(HIL_B)/m7/vector-runner.elf: $(M7_OBJS) hil/m7/m7.ld
	$(M7_CC) $(M7_ARCH) -nostdlib -T hil/m7/m7.ld -Wl,--gc-sections -Wl,-Map=$(HIL_B)/m7/vector-runner.map \
	    $(M7_OBJS) -lc -lgcc -o $@
$(HIL_B)/m7/link-target.elf: $(M7_LINK_OBJS) hil/m7/m7.ld
	$(M7_CC) $(M7_ARCH) -nostdlib -T hil/m7/m7.ld -Wl,--gc-sections -Wl,-Map=$(HIL_B)/m7/link-target.map \
	    $(M7_LINK_OBJS) -lc -lgcc -o $@

# Budget, then the image checks, then the must-fail probes.
$(HIL_B)/m7/image-ok: $(HIL_B)/m7/vector-runner.elf $(HIL_B)/m7/link-target.elf hil/check_m7_image.sh \
                      hil/m7/probe_float_heap.c
	@rm -f $(HIL_B)/m7/size.txt; for elf in $(HIL_B)/m7/vector-runner.elf $(HIL_B)/m7/link-target.elf; do \
	    arm-none-eabi-size -A $$elf | awk -v ram=$(M7_RAM_BUDGET) -v code=$(M7_CODE_BUDGET) -v name=$$(basename $$elf) ' \
	    $$1 == ".vectors" || $$1 == ".text" || $$1 == ".ARM.exidx" { c += $$2 } \
	    $$1 == ".data" { c += $$2; r += $$2; d = $$2 } $$1 == ".bss" { r += $$2; b = $$2 } \
	    $$1 == ".stack" { r += $$2; s = $$2 } \
	    END { printf "Cortex-M7 %s: code %d of %d octets (%.0f %%), static RAM %d of %d octets (%.0f %%: .data %d, .bss %d, stack %d)\n", \
	              name, c, code, 100 * c / code, r, ram, 100 * r / ram, d, b, s; \
	          if (c > code || r > ram) { print "Cortex-M7 image FAILED: over its memory budget (docs/targets.md)"; exit 1 } }' \
	    | tee -a $(HIL_B)/m7/size.txt; [ $${PIPESTATUS[1]} -eq 0 ] || exit 1; \
	    bash hil/check_m7_image.sh $$elf || { echo "Cortex-M7 image FAILED: floating point, heap or stdio linked in"; exit 1; }; \
	done
	@$(M7_CC) -O2 $(M7_ARCH) -c hil/m7/probe_float_heap.c -o $(HIL_B)/m7/probe-soft.o
	@$(M7_CC) -O2 -mcpu=cortex-m7 -mthumb -mfloat-abi=hard -mfpu=fpv5-d16 -c hil/m7/probe_float_heap.c \
	    -o $(HIL_B)/m7/probe-fpu.o
	@out=$$(bash hil/check_m7_image.sh $(HIL_B)/m7/probe-soft.o); [ $$? -eq 1 ] && grep -q 'soft-float' <<<"$$out" \
	    && grep -q 'heap' <<<"$$out" || { echo "image check FAILED to reject a soft-float, malloc probe: $$out"; exit 1; }
	@out=$$(bash hil/check_m7_image.sh $(HIL_B)/m7/probe-fpu.o); [ $$? -eq 1 ] && grep -q 'float: instructions' <<<"$$out" \
	    || { echo "image check FAILED to reject an FPU probe: $$out"; exit 1; }
	@echo "Cortex-M7 images: no floating-point instruction, soft-float call, libm, heap or stdio (the check rejects both probes)"
	@touch $@

# ---- PowerPC, 32-bit big-endian ----
$(HIL_B)/ppc/fw/%.o: firmware/%.c $(HIL_HEADERS) | $(HIL_B)/tools-ok
	@mkdir -p $(@D)
	$(PPC_CC) $(FW_CFLAGS) -Ifirmware -c $< -o $@
$(HIL_B)/ppc/hil/%.o: hil/%.c $(HIL_HEADERS) | $(HIL_B)/tools-ok
	@mkdir -p $(@D)
	$(PPC_CC) $(FW_CFLAGS) -Ifirmware -Ihil -c $< -o $@
$(HIL_B)/ppc/hil/io_posix.o: hil/io_posix.c hil/runner_io.h | $(HIL_B)/tools-ok
	@mkdir -p $(@D)
	$(PPC_CC) $(PPC_IO_CFLAGS) -Ihil -c $< -o $@
PPC_OBJS := $(patsubst firmware/%.c,$(HIL_B)/ppc/fw/%.o,$(FW_SRC)) \
            $(patsubst hil/%.c,$(HIL_B)/ppc/hil/%.o,$(HIL_COMMON) hil/io_posix.c)
$(HIL_B)/ppc/vector-runner: $(PPC_OBJS)
	$(PPC_CC) -static $^ -o $@
$(HIL_B)/ppc/hil/link_posix.o: hil/link_posix.c $(HIL_HEADERS) | $(HIL_B)/tools-ok
	@mkdir -p $(@D)
	$(PPC_CC) $(PPC_IO_CFLAGS) -Ifirmware -Ihil -c $< -o $@
PPC_LINK_OBJS := $(patsubst firmware/%.c,$(HIL_B)/ppc/fw/%.o,$(FW_SRC)) \
                 $(patsubst hil/%.c,$(HIL_B)/ppc/hil/%.o,hil/hil_run.c hil/link_target.c hil/link_posix.c)
$(HIL_B)/ppc/link-target: $(PPC_LINK_OBJS)
	$(PPC_CC) -static $^ -o $@
$(HIL_B)/ppc/format-ok: $(HIL_B)/ppc/vector-runner $(HIL_B)/ppc/link-target
	@for b in $^; do h=$$(powerpc-linux-gnu-readelf -h $$b); grep -q 'ELF32' <<<"$$h" && grep -q 'big endian' <<<"$$h" \
	    && grep -q 'PowerPC' <<<"$$h" || { echo "PowerPC build FAILED: $$b is not a 32-bit big-endian PowerPC ELF"; exit 1; }; done
	@touch $@

# The comparison runs in tests/test_cross.c, the link in tests/test_link.c,
# in every suite that has them.
$(BUILD)/rel/test_cross $(BUILD)/san/test_cross $(BUILD)/rel/test_link $(BUILD)/san/test_link: | $(HIL_RUNNERS)

.PHONY: cross
cross: $(HIL_RUNNERS) $(BUILD)/rel/test_cross ## build the vector runner for host, Cortex-M7, PowerPC and compare all vectors
	@bash tests/run_suite.sh $(BUILD)/rel test_cross

# ---- processing budget: per-stage cost on the Cortex-M7 (docs/performance.md) ----
# The default scenario's configuration (8192 points) needs its own maxima;
# the program is timed under QEMU with -icount shift=0 (1 ns per instruction)
# and run twice: the counts must repeat exactly.
M7C_B := $(HIL_B)/m7cost
M7C_CFLAGS := $(FW_CFLAGS) $(M7_ARCH) -DTL_MAX_POINTS=8192u -DTL_MAX_TAPS=4u -ffunction-sections -fdata-sections
M7C_QEMU := qemu-system-arm -M mps2-an500 -icount shift=0 -semihosting-config enable=on,target=native \
            -display none -monitor none -serial none -nodefaults -kernel
$(M7C_B)/fw/%.o: firmware/%.c $(HIL_HEADERS) | $(HIL_B)/tools-ok
	@mkdir -p $(@D)
	$(M7_CC) $(M7C_CFLAGS) -Ifirmware -c $< -o $@
$(M7C_B)/hil/%.o: hil/m7/%.c $(HIL_HEADERS) | $(HIL_B)/tools-ok
	@mkdir -p $(@D)
	$(M7_CC) $(M7C_CFLAGS) -Ifirmware -Ihil -Ihil/m7 -c $< -o $@
M7C_OBJS := $(patsubst firmware/%.c,$(M7C_B)/fw/%.o,$(FW_SRC)) \
            $(patsubst hil/m7/%.c,$(M7C_B)/hil/%.o,hil/m7/startup.c hil/m7/semihost.c hil/m7/cost_main.c)
$(M7C_B)/stage-cost.elf: $(M7C_OBJS) hil/m7/m7.ld
	$(M7_CC) $(M7_ARCH) -nostdlib -T hil/m7/m7.ld -Wl,--gc-sections $(M7C_OBJS) -lc -lgcc -o $@

.PHONY: processing-budget
processing-budget: $(M7C_B)/stage-cost.elf ## per-stage instructions on the Cortex-M7 (qemu -icount, run twice) into docs/m7-stage-cost.txt
	@for run in 1 2; do timeout 600 $(M7C_QEMU) $< 2>$(M7C_B)/run$$run.txt >/dev/null || { cat $(M7C_B)/run$$run.txt; exit 1; }; done
	@grep '^cost ' $(M7C_B)/run1.txt > $(M7C_B)/cost1.txt; grep '^cost ' $(M7C_B)/run2.txt > $(M7C_B)/cost2.txt
	@cmp -s $(M7C_B)/cost1.txt $(M7C_B)/cost2.txt || { echo "processing budget FAILED: the two runs differ"; \
	    diff $(M7C_B)/cost1.txt $(M7C_B)/cost2.txt; exit 1; }
	@cp $(M7C_B)/cost1.txt docs/m7-stage-cost.txt
	@echo "Cortex-M7 stage cost (qemu-system-arm -icount shift=0, two runs identical) -> docs/m7-stage-cost.txt:"; \
	    cat docs/m7-stage-cost.txt
# tests/test_acquisition.c runs the program twice under qemu (it skips, saying
# so, only where qemu-system-arm is absent)
ifneq ($(shell command -v qemu-system-arm 2>/dev/null),)
$(BUILD)/rel/test_acquisition $(BUILD)/san/test_acquisition $(BUILD)/cov/test_acquisition: | $(M7C_B)/stage-cost.elf
endif
