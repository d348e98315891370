"""Prints the flash footprint of an ELF file: the sizes of its allocated, non-writable-data
sections (.vector_table, .text, .rodata) and of RAM sections (.data, .bss), from the section
headers (ELF32 or ELF64, little-endian). Usage: python3 scripts/elf_size.py FILE"""
import struct
import sys

with open(sys.argv[1], "rb") as f:
    elf = f.read()
is64 = elf[4] == 2
if is64:
    shoff, = struct.unpack_from("<Q", elf, 0x28)
    shentsize, shnum, shstrndx = struct.unpack_from("<HHH", elf, 0x3A)
else:
    shoff, = struct.unpack_from("<I", elf, 0x20)
    shentsize, shnum, shstrndx = struct.unpack_from("<HHH", elf, 0x2E)


def section(i):
    base = shoff + i * shentsize
    if is64:
        name, typ, flags, _, _, size = struct.unpack_from("<IIQQQQ", elf, base)
        offset, = struct.unpack_from("<Q", elf, base + 0x18)
    else:
        name, typ, flags, _, offset, size = struct.unpack_from("<IIIIII", elf, base)
    return name, typ, flags, offset, size


_, _, _, stroff, _ = section(shstrndx)
sizes = {}
for i in range(shnum):
    name, typ, flags, _, size = section(i)
    label = elf[stroff + name:elf.index(b"\0", stroff + name)].decode()
    if flags & 0x2:  # SHF_ALLOC
        sizes[label] = size
flash = sum(v for k, v in sizes.items() if k in (".vector_table", ".text", ".rodata"))
ram = sum(v for k, v in sizes.items() if k in (".data", ".bss", ".uninit"))
print("  ".join(f"{k} {v}" for k, v in sorted(sizes.items())))
print(f"flash (vector table + code + read-only data): {flash} bytes ({flash / 1024:.1f} KiB); RAM: {ram} bytes")
