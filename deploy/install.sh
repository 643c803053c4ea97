#!/usr/bin/env bash
# Installs sestond as a systemd service on Debian 12.
#
#   sudo deploy/install.sh [BUILD_DIR]      (default BUILD_DIR: ./build)
#
# Puts in place:
#   /usr/local/bin/{sestond,sestonctl,seston-sim}   the binaries from BUILD_DIR
#   /etc/systemd/system/sestond.service             deploy/sestond.service
#   /etc/seston/seston.yaml                          from config/seston.example.yaml, with
#                                                    every path under /var/lib/seston (only
#                                                    when no config is there yet)
#   /var/lib/seston/{drop,drop/done,drop/quarantine,counts,alerts,state}
# and creates the system user and group `seston`. Add the account that writes the
# instrument's files to the group: usermod -aG seston INSTRUMENT_USER.
# It does not start the service: check the config, then systemctl enable --now sestond.
# Environment: DESTDIR (default "") installs under another root, for packaging and tests;
# then no user is created and systemd is not told.
set -euo pipefail

here="$(cd "$(dirname "${BASH_SOURCE[0]}")" && pwd)"
source_dir="$(dirname "$here")"
build="${1:-$source_dir/build}"
root="${DESTDIR:-}"

for binary in daemon/sestond tools/sestonctl/sestonctl tools/seston-sim/seston-sim; do
  if [[ ! -x "$build/$binary" ]]; then
    echo "install.sh: $build/$binary is missing; build first: cmake --build $build" >&2
    exit 2
  fi
done

if [[ -z "$root" ]]; then
  if [[ $(id -u) -ne 0 ]]; then
    echo "install.sh: run as root (sudo), or set DESTDIR to install under another root" >&2
    exit 2
  fi
  if ! getent group seston >/dev/null; then groupadd --system seston; fi
  if ! getent passwd seston >/dev/null; then
    useradd --system --gid seston --home-dir /var/lib/seston --no-create-home \
            --shell /usr/sbin/nologin --comment "seston daemon" seston
  fi
fi

install -d "$root/usr/local/bin" "$root/etc/systemd/system" "$root/etc/seston" \
           "$root/usr/local/share/doc/seston"
install -m 0755 "$build/daemon/sestond" "$build/tools/sestonctl/sestonctl" \
                "$build/tools/seston-sim/seston-sim" "$root/usr/local/bin/"
install -m 0644 "$here/sestond.service" "$root/etc/systemd/system/sestond.service"
install -m 0644 "$source_dir/README.md" "$root/usr/local/share/doc/seston/README.md"

config="$root/etc/seston/seston.yaml"
if [[ -e "$config" ]]; then
  echo "install.sh: keeping the existing $config"
else
  # The example has every key at its default; point every path at /var/lib/seston.
  sed -e 's#^\(  drop_dir:\) .*#\1 /var/lib/seston/drop#' \
      -e 's#^\(  done_dir:\) .*#\1 /var/lib/seston/drop/done#' \
      -e 's#^\(  quarantine_dir:\) .*#\1 /var/lib/seston/drop/quarantine#' \
      -e 's#^\(  output_dir:\) .*#\1 /var/lib/seston/counts#' \
      -e '/^alerts:/,/^[a-z]/ s#^\(  dir:\) .*#\1 /var/lib/seston/alerts#' \
      -e '/^state:/,/^[a-z]/ s#^\(  dir:\) .*#\1 /var/lib/seston/state#' \
      "$source_dir/config/seston.example.yaml" >"$config"
  chmod 0640 "$config"
  echo "install.sh: wrote $config; edit station and features for your instrument"
fi

for dir in drop drop/done drop/quarantine counts alerts state; do
  install -d -m 2770 "$root/var/lib/seston/$dir"
done
if [[ -z "$root" ]]; then
  chown -R seston:seston /var/lib/seston
  chgrp seston "$config"
  "$root/usr/local/bin/sestond" check-config "$config" >/dev/null ||
    echo "install.sh: $config has problems: sestond check-config $config" >&2
  systemctl daemon-reload 2>/dev/null || true
fi
echo "install.sh: done. Start with: systemctl enable --now sestond"
