#!/usr/bin/env bash
# The firmware checks tests/run-all runs: for each float backend, build the console and
# self-test images (firmware profile), run the self-test under QEMU mps2-an386 (every
# docs/PROTOCOL.md session on the target; exit status from semihosting), and fail if
# f64 soft-float routines appear in an image (the core computes in f32 only; a
# Cortex-M4F does f64 in software).
# Installs qemu-system-arm (apt, with sudo when not root) and the Rust target when
# missing.
set -euo pipefail
cd "$(dirname "$0")"

sudo=""
[ "$(id -u)" = 0 ] || sudo=sudo
if ! command -v qemu-system-arm >/dev/null; then
  echo "installing qemu-system-arm"
  $sudo apt-get update -qq
  DEBIAN_FRONTEND=noninteractive $sudo apt-get install -y -qq --no-install-recommends qemu-system-arm >/dev/null
fi
if ! rustup target list --installed | grep -qx thumbv7em-none-eabihf; then
  rustup target add thumbv7em-none-eabihf
fi
# Symbols: binutils' nm reads the ARM ELF; arm-none-eabi-nm when present.
nmtool=nm
command -v arm-none-eabi-nm >/dev/null && nmtool=arm-none-eabi-nm
if ! command -v "$nmtool" >/dev/null; then
  $sudo apt-get install -y -qq --no-install-recommends binutils >/dev/null
fi

# f64 routines of the compiler's soft-float library: __aeabi_dadd, __aeabi_dmul,
# __aeabi_d2f, __aeabi_f2d, __aeabi_i2d, __adddf3, __muldf3, __divdf3, __extendsfdf2 …
SOFT_F64='^(__aeabi_(d[a-z0-9]+|[a-z0-9]*2d)|__[a-z]*df[0-9]?[a-z0-9]*)$'

status=0
for backend in libm fast-math; do
  feat=()
  tdir=target
  if [ "$backend" = fast-math ]; then feat=(--features fast-math); tdir=target/fast-math; fi
  echo "--- backend $backend: build"
  cargo build --quiet --profile firmware --bin console --bin selftest --target-dir "$tdir" "${feat[@]}"
  bin="$tdir/thumbv7em-none-eabihf/firmware"
  for img in console selftest; do
    found="$("$nmtool" "$bin/$img" | awk '{print $NF}' | grep -E "$SOFT_F64" | sort -u | tr '\n' ' ' || true)"
    if [ -n "$found" ]; then
      echo "FAIL: f64 soft-float routines in the $backend $img image: $found"
      status=1
    else
      echo "ok: no f64 soft-float routines in the $backend $img image"
    fi
  done
  echo "--- backend $backend: self-test under QEMU"
  if timeout 300 qemu-system-arm -machine mps2-an386 -cpu cortex-m4 -display none -monitor none \
    -serial stdio -semihosting-config enable=on,target=native -icount shift=0 \
    -kernel "$bin/selftest" >"$tdir/selftest.log" 2>&1; then
    grep -E '^selftest: ' "$tdir/selftest.log" | tr -d '\r'
  else
    rc=$?
    tr -d '\r' <"$tdir/selftest.log" | grep -vE '^(> |ok|err|- )' | tail -40
    echo "FAIL: the $backend self-test exited with status $rc"
    status=1
  fi
done
# The console image over mwctl's qemu link (checksums on, every reply line checked):
# the same replies as the in-process simulator, byte for byte.
echo "--- the console image over mwctl --link qemu against --link sim"
# Built from the workspace root: this folder's .cargo/config.toml targets the board.
(cd ../.. && cargo build --quiet -p matterwave-console --bin mwctl)
mwctl=(../../target/debug/mwctl)
if "${mwctl[@]}" run --link "qemu:$PWD/target/thumbv7em-none-eabihf/firmware/console" link-script.txt >target/link-qemu.txt 2>&1 &&
  "${mwctl[@]}" run --link sim link-script.txt >target/link-sim.txt 2>&1 &&
  # Each run leaves its own session mark (`session=` in status): not part of the math.
  cmp -s <(sed 's/ session=[0-9]*//' target/link-qemu.txt) <(sed 's/ session=[0-9]*//' target/link-sim.txt); then
  echo "ok: $(grep -c '^> ' target/link-sim.txt) requests, $(grep -c '^< ' target/link-sim.txt) reply lines alike over qemu and sim"
else
  echo "FAIL: replies over --link qemu differ from --link sim (or a run failed):"
  diff target/link-qemu.txt target/link-sim.txt | head -20 || true
  status=1
fi
# mwctl verify against the image: every reply identical to the host's core and within
# the oracle's tolerances (the quick sweep: 533 requests).
echo "--- mwctl verify --quick --link qemu"
if "${mwctl[@]}" verify --quick --link "qemu:$PWD/target/thumbv7em-none-eabihf/firmware/console" >target/verify-qemu.txt 2>&1; then
  grep -E '^(verify|reply lines)' target/verify-qemu.txt
else
  cat target/verify-qemu.txt | tail -20
  echo "FAIL: mwctl verify over the QEMU image"
  status=1
fi
exit $status
