#!/usr/bin/env python3
"""Instructions per `step` on an emulated Cortex-M4F.

Runs the size probe's firmware (runtime/size-probe, built for thumbv7em-none-eabihf) in the
Unicorn CPU emulator (QEMU's Cortex-M4 model; `pip install unicorn`, tested with 2.1.4) from its
reset vector, and counts the Thumb-2 instructions executed between successive writes of the
estimate, i.e. per `step`. Counts are exact and repeatable; cycles are not modelled (on a
Cortex-M4 most instructions take one cycle, loads two, a divide up to 14). It also reports how
many of them run inside the compiler's software floating-point routines (`__aeabi_*`), which a
single-precision FPU needs for every f64 operation and every f64 -> f32 conversion.

    (cd runtime/size-probe && cargo build --release --features bench-model)
    python3 scripts/bench/thumb_step.py runtime/size-probe/target/thumbv7em-none-eabihf/release/regimix-size-probe
"""

import bisect
import collections
import struct
import subprocess
import sys

from unicorn import UC_ARCH_ARM, UC_HOOK_CODE, UC_HOOK_MEM_WRITE, UC_MODE_MCLASS, UC_MODE_THUMB, Uc
from unicorn.arm_const import UC_CPU_ARM_CORTEX_M4, UC_ARM_REG_SP

FLASH, FLASH_SIZE = 0x08000000, 512 * 1024
RAM, RAM_SIZE = 0x20000000, 128 * 1024
SYSTEM, SYSTEM_SIZE = 0xE0000000, 0x100000  # SCB (the reset handler enables the FPU there)
STEPS = 12


def load_segments(elf):
    """(physical address, bytes) of every PT_LOAD segment of a 32-bit little-endian ELF."""
    (phoff,) = struct.unpack_from("<I", elf, 0x1C)
    phentsize, phnum = struct.unpack_from("<HH", elf, 0x2A)
    out = []
    for i in range(phnum):
        p_type, p_offset, _vaddr, p_paddr, p_filesz = struct.unpack_from("<IIIII", elf, phoff + i * phentsize)
        if p_type == 1 and p_filesz:
            out.append((p_paddr, elf[p_offset : p_offset + p_filesz]))
    return out


def symbols(path):
    """Sorted (address, name) of the text symbols and the address of the OUTPUT static."""
    text, output = [], None
    for line in subprocess.run(["llvm-nm", "-n", path], capture_output=True, text=True, check=True).stdout.splitlines():
        parts = line.split()
        if len(parts) != 3:
            continue
        addr, kind, name = int(parts[0], 16), parts[1], parts[2]
        if kind in "tT":
            text.append((addr & ~1, name))
        if "6OUTPUT" in name:
            output = addr
    return text, output


def main(path):
    elf = open(path, "rb").read()
    text, output = symbols(path)
    if output is None:
        sys.exit("no OUTPUT symbol: is this the size probe?")
    # The compiler's software floating point: `__aeabi_d*`/`__aeabi_f*` (not the memory
    # helpers `__aeabi_mem*`) and the `compiler_builtins` float routines they call.
    soft = sorted(
        a
        for a, n in text
        if (n.startswith("__aeabi_") and not n.startswith("__aeabi_mem"))
        or ("compiler_builtins" in n and "float" in n)
    )
    bounds = [a for a, _ in text] + [FLASH + FLASH_SIZE]
    soft_ranges = []
    for a in soft:
        nxt = next(b for b in bounds if b > a)
        soft_ranges.append((a, nxt))

    uc = Uc(UC_ARCH_ARM, UC_MODE_THUMB | UC_MODE_MCLASS)
    uc.ctl_set_cpu_model(UC_CPU_ARM_CORTEX_M4)
    for base, size in ((FLASH, FLASH_SIZE), (RAM, RAM_SIZE), (SYSTEM, SYSTEM_SIZE)):
        uc.mem_map(base, size)
    for addr, data in load_segments(elf):
        uc.mem_write(addr, bytes(data))
    sp, reset = struct.unpack("<II", uc.mem_read(FLASH, 8))
    uc.reg_write(UC_ARM_REG_SP, sp)

    state = {"total": 0, "soft": 0, "marks": []}
    starts = [a for a, _ in text]
    by_function = collections.Counter()

    def on_code(_uc, address, _size, _data):
        state["total"] += 1
        for lo, hi in soft_ranges:
            if lo <= address < hi:
                state["soft"] += 1
                break
        if len(state["marks"]) == STEPS:
            i = bisect.bisect_right(starts, address) - 1
            by_function[text[i][1] if i >= 0 else "?"] += 1

    def on_write(uc_, _access, address, _size, _value, _data):
        if address == output:
            state["marks"].append((state["total"], state["soft"]))
            if len(state["marks"]) > STEPS:
                uc_.emu_stop()

    uc.hook_add(UC_HOOK_CODE, on_code)
    uc.hook_add(UC_HOOK_MEM_WRITE, on_write, begin=output, end=output + 3)
    uc.emu_start(reset | 1, FLASH + FLASH_SIZE, count=200_000_000)
    marks = state["marks"]
    if len(marks) < 3:
        sys.exit(f"only {len(marks)} estimates written")
    per = [(b[0] - a[0], b[1] - a[1]) for a, b in zip(marks, marks[1:])]
    steady = per[-1]
    print(f"steps observed: {len(per)}; instructions per step (last): {steady[0]}, of which in software floating-point routines: {steady[1]}")
    print("per step:", ", ".join(str(p[0]) for p in per))
    print("last step by function:")
    for name, count in by_function.most_common(12):
        print(f"  {count:7d}  {name}")


if __name__ == "__main__":
    main(sys.argv[1] if len(sys.argv) > 1 else "runtime/size-probe/target/thumbv7em-none-eabihf/release/regimix-size-probe")
