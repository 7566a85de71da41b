#!/usr/bin/env bash
# Footprint and speed of the core on the Cortex-M4F (QEMU mps2-an386, -icount shift=0),
# both float backends, side by side with the plain C reference when it is present.
# Prints one Markdown table (docs/FIRMWARE.md holds the committed one).
#
# Usage: tests/firmware/measure.sh [C_REFERENCE_DIR]
#   C_REFERENCE_DIR: a folder with a plain C reference's run.sh (or the environment
#   variable of that name); without one, the table has our figures only.
set -euo pipefail
here="$(cd "$(dirname "$0")" && pwd)"
repo="$(cd "$here/../.." && pwd)"
cd "$here"

qemu() {
  timeout 600 qemu-system-arm -machine mps2-an386 -cpu cortex-m4 -display none -monitor none \
    -serial stdio -semihosting-config enable=on,target=native -icount shift=0 -kernel "$1"
}

sizetool=size
command -v arm-none-eabi-size >/dev/null && sizetool=arm-none-eabi-size
nmtool=nm
command -v arm-none-eabi-nm >/dev/null && nmtool=arm-none-eabi-nm

# flash = vector table + .text + .rodata (+ .data's load image) of an ELF, bytes.
flash() {
  "$sizetool" -A "$1" | awk '$1==".vector_table"||$1==".text"||$1==".rodata"||$1==".data"{s+=$2} END{print s}'
}
softfloat() {
  "$nmtool" "$1" | awk '{print $NF}' |
    grep -cE '^(__aeabi_(d[a-z0-9]+|[a-z0-9]*2d)|__[a-z]*df[0-9]?[a-z0-9]*)$' || true
}

declare -A R
for backend in libm fast-math; do
  feat=()
  tdir="target"
  if [ "$backend" = fast-math ]; then feat=(--features fast-math); tdir="target/fast-math"; fi
  cargo build --quiet --profile firmware --bins --target-dir "$tdir" "${feat[@]}"
  bin="$tdir/thumbv7em-none-eabihf/firmware"
  out="$(qemu "$bin/measure" | tr -d '\r')"
  while IFS='=' read -r k v; do
    [ -n "${v:-}" ] && R["$backend.$k"]="$v"
  done <<<"$out"
  R["$backend.flash"]="$(flash "$bin/console")"
  R["$backend.softfloat"]="$(softfloat "$bin/console")"
done

cref="${1:-${C_REFERENCE_DIR:-}}"
cnote=""
if [ -x "$cref/run.sh" ] || [ -f "$cref/run.sh" ]; then
  cout="$(bash "$cref/run.sh" 2>&1 | tr -d '\r')"
  # Lines: opt=-O2 text=N / wavelength_instr_x100=N / aim_steps_instr_x100=N /
  # beam_list_fcc111_200eV_instr=N beams=N, once per optimisation level.
  eval "$(awk '
    /^opt=/ { split($1, a, "="); o = substr(a[2], 2); split($2, t, "="); print "C_" o "_text=" t[2] }
    /^wavelength_instr_x100=/ { split($0, a, "="); printf "C_%s_wl=%.0f\n", o, a[2] / 100 }
    /^aim_steps_instr_x100=/ { split($0, a, "="); printf "C_%s_aim=%.0f\n", o, a[2] / 100 }
    /^beam_list_fcc111_200eV_instr=/ { split($1, a, "="); split($2, b, "=");
      print "C_" o "_bl=" a[2]; print "C_" o "_beams=" b[2] }
  ' <<<"$cout")"
else
  echo "C reference not found (looked for $cref/run.sh); C columns left empty" >&2
  cnote="C reference not found"
fi

c() { local v="C_$1_$2"; echo "${!v:-—}"; }
r() { echo "${R[$1.$2]:-—}"; }
kib() { awk -v b="$1" 'BEGIN{ if (b == "" || b == "—") print "—"; else printf "%.1f KiB", b / 1024 }'; }
ram() { awk -v s="$1" -v st="$2" 'BEGIN{ printf "%.1f KiB", (s + st) / 1024 }'; }

echo
echo "| operation | budget | core, libm, opt-level s | core, \`fast-math\`, s | plain C -O2 | plain C -Os |"
echo "|---|---|---|---|---|---|"
echo "| one wavelength (instructions) | ≤ 20 | $(r libm wavelength) | $(r fast-math wavelength) | $(c O2 wl) | $(c Os wl) |"
echo "| in-plane aim → microsteps from core parts | ≤ 1.3× C | $(r libm inplane_steps) | $(r fast-math inplane_steps) | $(c O2 aim) | $(c Os aim) |"
echo "| \`goniometer::aim\` (as the console calls it) | ≤ 3,000 | $(r libm aim) | $(r fast-math aim) | $(c O2 aim) (less general) | |"
echo "| sorted beam list, Ni(111) a = 3.524 Å, 200 eV | ≤ 1.3× C | $(r libm beam_list) ($(r libm beam_list_beams) beams) | $(r fast-math beam_list) ($(r fast-math beam_list_beams)) | $(c O2 bl) ($(c O2 beams) beams) | $(c Os bl) |"
echo "| console \`beams\` request ($(r libm console_beams_lines) reply lines) | ≤ 40,000 | $(r libm console_beams) | $(r fast-math console_beams) | — | — |"
echo "| console \`aim\` request round trip ($(r libm console_aim_lines) lines) | ≤ 10,000 | $(r libm console_aim) | $(r fast-math console_aim) | — | — |"
echo "| one number written by the console: shortest round trip / 4 fixed decimals | | $(r libm format_roundtrip) / $(r libm format_fixed4) | $(r fast-math format_roundtrip) / $(r fast-math format_fixed4) | | |"
echo "| longest single \`Console::push\` / \`poll\` over the heavy requests (what a \`stop\` waits for; $(r libm worst_call_calls) calls) | | $(r libm worst_call) (\`$(r libm worst_call_request)\`) | $(r fast-math worst_call) (\`$(r fast-math worst_call_request)\`) | | |"
echo "| flash of the console image (vectors + text + rodata) | ≤ 64 KiB | $(kib "$(r libm flash)") | $(kib "$(r fast-math flash)") | $(kib "$(c O2 text)") (math only) | $(kib "$(c Os text)") |"
echo "| stack of one \`beams\` / \`aim\` request | | $(r libm console_beams_stack) / $(r libm console_aim_stack) B | $(r fast-math console_beams_stack) / $(r fast-math console_aim_stack) B | | |"
echo "| RAM: static + deepest stack over the PROTOCOL.md sessions (console on the stack, $(r libm console_size) B) | ≤ 16 KiB | $(ram "$(r libm static_ram)" "$(r libm sweep_stack)") | $(ram "$(r fast-math static_ram)" "$(r fast-math sweep_stack)") | | |"
echo "| f64 soft-float routines in the console image | 0 | $(r libm softfloat) | $(r fast-math softfloat) | | |"
[ -n "$cnote" ] && echo && echo "($cnote: the C columns are empty.)"
exit 0
