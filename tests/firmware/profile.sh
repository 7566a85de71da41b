#!/usr/bin/env bash
# Where the instructions of one operation go on the Cortex-M4F: builds the `profile`
# image for the operation (see src/bin/profile.rs), runs it under QEMU mps2-an386 with
# every executed translation block logged (-d in_asm,exec,nochain), and prints the
# instructions per function between mark_start and mark_end, largest first. Not run by
# CI; a tool for finding hot spots.
#
# Usage: tests/firmware/profile.sh OP [N] [TOP]
#   OP: aim | beam_list | 'console:R1;R2;...;Rn' (the last request is profiled)
#   N: repetitions (default 1); TOP: rows printed (default 40)
# Example: tests/firmware/profile.sh 'console:set crystal=ni face=111 energy=200 tilt=0;beams'
set -euo pipefail
here="$(cd "$(dirname "$0")" && pwd)"
cd "$here"
op="${1:?usage: profile.sh OP [N] [TOP]}"
n="${2:-1}"
top="${3:-40}"
tdir=target/profile
MW_PROFILE="$op" MW_PROFILE_N="$n" cargo build --quiet --profile firmware --bin profile --target-dir "$tdir"
bin="$tdir/thumbv7em-none-eabihf/firmware/profile"
log="$(mktemp /tmp/mw-profile.XXXXXX)"
trap 'rm -f "$log"' EXIT
timeout 600 qemu-system-arm -machine mps2-an386 -cpu cortex-m4 -display none -monitor none \
  -serial stdio -semihosting-config enable=on,target=native -icount shift=0 \
  -d in_asm,exec,nochain -D "$log" -kernel "$bin" | tr -d '\r' >&2
# in_asm: "IN: sym" then one "0x…:" line per instruction; exec: "Trace …[…/PC/…] sym".
python3 - "$log" "$top" <<'PY'
import sys, collections
size, cnt, total, on, start = {}, collections.Counter(), 0, False, None
for line in open(sys.argv[1], errors="replace"):
    if line.startswith("IN:"):
        start = None
    elif line.startswith("0x") and ":" in line:
        pc = int(line.split(":")[0], 16)
        if start is None:
            start = pc
            size[start] = 0
        size[start] += 1
    elif line.startswith("Trace"):
        start = None
        pc = int(line.split("[")[1].split("/")[1], 16)
        sym = line.split("]")[1].strip()
        if sym == "mark_start":
            on = True
        elif sym == "mark_end":
            on = False
        elif on:
            cnt[sym] += size.get(pc, 0)
            total += size.get(pc, 0)
    else:
        start = None
print(f"total {total} instructions")
for sym, c in cnt.most_common(int(sys.argv[2])):
    print(f"{c:9d} {100 * c / max(total, 1):5.1f}%  {sym}")
PY
