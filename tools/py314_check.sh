#!/usr/bin/env bash
# Prove `portflux demo` and `portflux recalc` on a real CPython 3.14.
#
# Builds (once) a Debian-unstable chroot that carries python3.14, copies in this host's pip
# configuration (its config files, the PIP_* environment and the certificate files they name),
# installs the current checkout (working tree, committed or not) into a venv inside the chroot and
# runs the demo, `template`, `recalc` and `check` there. Exit status: 0 when all steps succeed,
# 1 when one of them fails, 2 when the chroot or the install could not be made. The install
# ignores the package's requires-python (3.14 was excluded while the engine did not work there); the
# point is to find out whether it does.
#
# Usage (as root, on a Debian/Ubuntu host with network access to deb.debian.org and a package index):
#     tools/py314_check.sh [CHROOT_DIR]        # default /var/tmp/portflux-py314
# A second run reuses the chroot (delete CHROOT_DIR for a fresh one, after checking with
# `findmnt -R CHROOT_DIR` that nothing is still mounted under it). Times of each phase are
# printed so that the cost of making this a CI step can be judged.
set -euo pipefail

HERE="$(cd "$(dirname "$0")/.." && pwd)"
ROOT="${1:-/var/tmp/portflux-py314}"
MIRROR="${DEBIAN_MIRROR:-http://deb.debian.org/debian}"
PYV=python3.14
MOUNTS=()

say() { printf 'py314: %s\n' "$*" >&2; }
now() { date +%s; }
die() { say "$*"; exit 2; }

[ "$(id -u)" = 0 ] || die "run as root (debootstrap and chroot need it)"

cleanup() {
    local i
    for ((i=${#MOUNTS[@]}-1; i>=0; i--)); do umount -l "${MOUNTS[$i]}" 2>/dev/null || true; done
}
trap cleanup EXIT
trap "exit 130" INT
trap "exit 143" TERM

t0=$(now)
# 1. the chroot -----------------------------------------------------------------------------------
if [ ! -x "$ROOT/usr/bin/$PYV" ]; then
    if ! command -v debootstrap >/dev/null 2>&1; then
        say "installing debootstrap"
        apt-get update -qq && DEBIAN_FRONTEND=noninteractive apt-get install -y -qq debootstrap \
            >/dev/null || die "cannot install debootstrap"
    fi
    say "debootstrap unstable into $ROOT (several minutes)"
    # never delete through a bind mount (/dev, the pip folders) left by an interrupted run
    if grep -q " $ROOT/" /proc/mounts 2>/dev/null; then die "something is mounted under $ROOT; unmount it first"; fi
    rm -rf --one-file-system "$ROOT"
    debootstrap --variant=minbase --include=$PYV,$PYV-venv,ca-certificates \
        unstable "$ROOT" "$MIRROR" >"$ROOT.debootstrap.log" 2>&1 \
        || { tail -20 "$ROOT.debootstrap.log" >&2; die "debootstrap failed (log: $ROOT.debootstrap.log)"; }
fi
t1=$(now); say "chroot ready in $((t1 - t0)) s: $(chroot "$ROOT" /usr/bin/$PYV -VV | head -1)"

bind() {  # bind SRC at the same path inside the chroot (read-only when $2 = ro)
    local src="$1" dst="$ROOT$1"
    [ -e "$src" ] || return 0
    mountpoint -q "$dst" 2>/dev/null && return 0
    if [ -d "$src" ]; then mkdir -p "$dst"; else mkdir -p "$(dirname "$dst")"; touch "$dst"; fi
    if mount --bind "$src" "$dst" 2>/dev/null; then
        MOUNTS+=("$dst")
        [ "${2:-}" = ro ] && mount -o remount,bind,ro "$dst" 2>/dev/null || true
        return 0
    fi
    return 1
}
if ! bind /proc; then mount -t proc proc "$ROOT/proc" 2>/dev/null && MOUNTS+=("$ROOT/proc") || true; fi
bind /dev || say "could not bind /dev (continuing with debootstrap's device nodes)"
cp -L /etc/resolv.conf "$ROOT/etc/resolv.conf" 2>/dev/null || true

# 2. the host's pip configuration -----------------------------------------------------------------
COPIED=" "
copy_in() {  # copy a file to the same path in the chroot (once)
    [ -f "$1" ] || return 0
    case "$COPIED" in *" $1 "*) return 0;; esac
    COPIED="$COPIED$1 "
    mkdir -p "$ROOT$(dirname "$1")"; cp -L "$1" "$ROOT$1"; say "copied $1"
}
HOSTPY=$(command -v python3)
for f in /etc/pip.conf /etc/xdg/pip/pip.conf "$HOME/.pip/pip.conf" "$HOME/.config/pip/pip.conf" \
         "${PIP_CONFIG_FILE:-}"; do
    [ -n "$f" ] && copy_in "$f"
done
[ -d /etc/xdg/pip ] && for f in /etc/xdg/pip/*; do copy_in "$f"; done
# Files and folders the configuration names: certificates, constraints, find-links and file:// indexes.
NAMED=$( { "$HOSTPY" -m pip config list 2>/dev/null || true; env | grep '^PIP_' || true; } \
        | sed -E "s/^[^=]*=//; s/^'//; s/'\$//" | tr ' ' '\n' | sed -E 's#^file://##' \
        | grep '^/' | sort -u || true)
for p in $NAMED; do
    if [ -f "$p" ]; then copy_in "$p"
    elif [ -d "$p" ]; then
        # a file:// index (PEP 503 "simple" folder) links to files beside it: bind its parent
        case "$p" in */simple|*/simple/) p=$(dirname "${p%/}");; esac
        bind "$p" ro && say "bound $p (read-only)" || say "could not bind $p; pip will skip it"
    fi
done
PIPENV=()
while IFS= read -r kv; do PIPENV+=("$kv"); done < <(env | grep '^PIP_' || true)

# 3. the checkout -------------------------------------------------------------------------------
SRC=/opt/portflux-src
rm -rf "$ROOT$SRC"; mkdir -p "$ROOT$SRC"
(cd "$HERE" && git ls-files -co --exclude-standard -z | tar --null -T - -cf -) | tar -C "$ROOT$SRC" -xf -

run_in() {  # run a shell snippet in the chroot with a clean environment plus PIP_*
    chroot "$ROOT" /usr/bin/env -i HOME=/root LANG=C.UTF-8 PATH=/opt/pf/bin:/usr/bin:/bin \
        "${PIPENV[@]}" /bin/sh -c "$1"
}
say "installing the checkout into a $PYV venv"
run_in "rm -rf /opt/pf && $PYV -m venv /opt/pf && pip install -q --ignore-requires-python $SRC" \
    || die "pip install of the checkout failed under $PYV"
t2=$(now); say "installed in $((t2 - t1)) s"

# 4. the proof ----------------------------------------------------------------------------------
status=0
step() {
    local name="$1"; shift
    local s; s=$(now)
    if run_in "cd /tmp && $*"; then say "PASS $name ($(( $(now) - s )) s)"
    else say "FAIL $name ($(( $(now) - s )) s)"; status=1; fi
}
step "python version" "python -c 'import sys; print(sys.version); assert sys.version_info[:2] == (3, 14)'"
step "portflux demo" "portflux demo -o /tmp/py314-demo.xlsx"
step "portflux template" "rm -f /tmp/py314-t.xlsx && portflux template /tmp/py314-t.xlsx"
step "portflux recalc" "portflux recalc /tmp/py314-t.xlsx -o /tmp/py314-t-out.xlsx"
step "portflux check" "portflux check >/tmp/py314-check.txt; rc=\$?; tail -1 /tmp/py314-check.txt; exit \$rc"
t3=$(now)
say "total $((t3 - t0)) s (chroot $((t1 - t0)) s, install $((t2 - t1)) s, runs $((t3 - t2)) s)"
[ $status = 0 ] && say "all steps passed on $PYV" || say "some steps failed on $PYV"
exit $status
