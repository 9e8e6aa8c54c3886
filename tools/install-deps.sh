#!/bin/sh
# Install the Debian packages that sillwatch needs to build and test.
# Called by the Makefile when a dependency is missing; safe to run by hand.
# Usage: tools/install-deps.sh [PACKAGE...]   (default: every build/test dependency)
set -eu

PACKAGES=${*:-"build-essential pkg-config libcsv-dev libgsl-dev libcmocka-dev libinih-dev nettle-dev tzdata libxml2-utils libpng-dev poppler-utils man-db groff-base libjansson-dev jq libnetcdf-dev parallel shellcheck"}

if [ "$(id -u)" = 0 ]; then
    SUDO=
elif command -v sudo >/dev/null 2>&1; then
    SUDO=sudo
else
    echo "install-deps: need root or sudo to install: $PACKAGES" >&2
    echo "install-deps: as root, run: apt-get install $PACKAGES" >&2
    exit 1
fi

echo "install-deps: installing Debian packages: $PACKAGES"
export DEBIAN_FRONTEND=noninteractive
$SUDO apt-get update -q
# shellcheck disable=SC2086
$SUDO apt-get install -y -q --no-install-recommends $PACKAGES
echo "install-deps: done"
