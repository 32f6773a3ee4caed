#!/bin/sh
# A stand-in for the node:20-bookworm-slim base image, for a machine that reaches a Debian mirror but
# not Docker Hub: Debian bookworm (debootstrap, minbase variant), this machine's Node 20 and npm placed
# in /usr/local as in the official image, and the unprivileged user `node` (uid 1000, gid 1000) that
# deploy/Dockerfile runs as, imported into podman under the official name so that the Dockerfile builds
# unchanged. It is not the official image (no yarn, no entrypoint script, npm as installed here), and
# Node's binary comes from this machine, so it must be a glibc build no newer than bookworm's (2.36).
# As root, with debootstrap and podman installed, from the repository root:
#   deploy/local-image.sh [DEBIAN_MIRROR]
#   podman build --pull=never -f deploy/Dockerfile -t shoal:0.1.0 .
set -eu

mirror=${1:-http://deb.debian.org/debian}
image=docker.io/library/node:20-bookworm-slim

node=$(readlink -f "$(command -v node)")
case $("$node" --version) in
v20.*) ;;
*)
  echo "local-image.sh: needs Node 20 on PATH, found $("$node" --version)" >&2
  exit 2
  ;;
esac
npm=$(npm root -g)/npm

root=$(mktemp -d)
trap 'rm -rf --one-file-system "$root"' EXIT
debootstrap --variant=minbase bookworm "$root" "$mirror"
install -m 755 "$node" "$root/usr/local/bin/node"
mkdir -p "$root/usr/local/lib/node_modules"
cp -a "$npm" "$root/usr/local/lib/node_modules/npm"
ln -s ../lib/node_modules/npm/bin/npm-cli.js "$root/usr/local/bin/npm"
ln -s ../lib/node_modules/npm/bin/npx-cli.js "$root/usr/local/bin/npx"
chroot "$root" groupadd --gid 1000 node
chroot "$root" useradd --uid 1000 --gid node --shell /bin/bash --create-home node
chroot "$root" apt-get clean
rm -rf "$root"/var/lib/apt/lists/*
tar -C "$root" -c . | podman import \
  --change 'ENV PATH=/usr/local/sbin:/usr/local/bin:/usr/sbin:/usr/bin:/sbin:/bin' \
  --change 'CMD ["node"]' - "$image"
echo "local-image.sh: $image is a local stand-in (Debian bookworm minbase, Node $("$node" --version))"
