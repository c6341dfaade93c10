#!/usr/bin/env bash
# The README's test command on a fresh Debian 12 machine, without a container engine: debootstrap a
# minimal Debian 12 (bookworm) into a new folder, copy this machine's Node 20 and npm into it,
# clone the current commit, and run `npm install && npm test` inside as root — no Chromium, no
# python3, nothing else preinstalled (the tests install what they need through apt-get). Only the
# machine's network settings are carried in: resolv.conf, the apt sources, the CA bundle (and
# NODE_EXTRA_CA_CERTS / npm's cafile pointing at it, as on the host).
#
#   sudo bin/fresh-machine-check.sh [FOLDER]     (default /var/tmp/reelwright-fresh; must not exist)
#
# Needs root, debootstrap (apt-get install debootstrap) and access to the Debian and npm
# registries. Prints the log path; exits with npm's status. The folder is left for inspection.
set -euo pipefail
repo=$(git -C "$(dirname "$0")/.." rev-parse --show-toplevel)
C=${1:-/var/tmp/reelwright-fresh}
log="$C.log"
[ "$(id -u)" = 0 ] || { echo "run as root (debootstrap, chroot, mount)" >&2; exit 2; }
[ -e "$C" ] && { echo "$C exists; give a new folder" >&2; exit 2; }
command -v debootstrap >/dev/null || { echo "needs debootstrap: apt-get install -y debootstrap" >&2; exit 2; }
node=$(command -v node)
npm_dir=$(dirname "$(dirname "$(readlink -f "$(command -v npm)")")")

debootstrap --variant=minbase --include=git,ca-certificates bookworm "$C" http://deb.debian.org/debian >"$log" 2>&1
cp "$node" "$C/usr/bin/node"
mkdir -p "$C/usr/lib/node_modules"
cp -a "$npm_dir" "$C/usr/lib/node_modules/npm"
ln -sf ../lib/node_modules/npm/bin/npm-cli.js "$C/usr/bin/npm"
ln -sf ../lib/node_modules/npm/bin/npx-cli.js "$C/usr/bin/npx"
cp /etc/resolv.conf "$C/etc/resolv.conf"
if [ -f /etc/apt/sources.list.d/debian.sources ]; then
  cp /etc/apt/sources.list.d/debian.sources "$C/etc/apt/sources.list.d/" && rm -f "$C/etc/apt/sources.list"
fi
cp /etc/ssl/certs/ca-certificates.crt "$C/etc/ssl/certs/ca-certificates.crt"

mounts=(proc dev dev/pts dev/shm sys)
cleanup() { for ((i = ${#mounts[@]} - 1; i >= 0; i--)); do umount "$C/${mounts[i]}" 2>/dev/null || true; done; }
trap cleanup EXIT
mount -t proc proc "$C/proc"
mount --bind /dev "$C/dev"
mount --bind /dev/pts "$C/dev/pts"
mount -t tmpfs tmpfs "$C/dev/shm"
mount --bind /sys "$C/sys"

git clone -q "$repo" "$C/root/reelwright"
git -C "$C/root/reelwright" checkout -q "$(git -C "$repo" rev-parse HEAD)"
{
  echo "== Debian $(cat "$C/etc/debian_version"), node $(chroot "$C" node -v), npm $(chroot "$C" npm -v)"
  echo "== before: chromium $(chroot "$C" sh -c 'ls /usr/bin/chromium 2>/dev/null || echo absent'), python3 $(chroot "$C" sh -c 'command -v python3 || echo absent')"
  echo "== commit $(git -C "$C/root/reelwright" log --oneline -1)"
  ca=/etc/ssl/certs/ca-certificates.crt
  set +e
  chroot "$C" /usr/bin/env -i HOME=/root PATH=/usr/local/sbin:/usr/local/bin:/usr/sbin:/usr/bin:/sbin:/bin LANG=C.UTF-8 \
    NODE_EXTRA_CA_CERTS=$ca SSL_CERT_FILE=$ca npm_config_cafile=$ca \
    bash -c 'cd /root/reelwright && time npm install --no-audit --no-fund && time npm test'
  rc=$?
  set -e
  echo "== exit $rc"
} >>"$log" 2>&1
echo "log: $log"
tail -n 12 "$log"
exit "$rc"
