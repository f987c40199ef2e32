#!/bin/sh
# The Debian package, built and installed into a scratch root without
# touching the running system.
#
#   check_deb.sh install CPACK BUILD_DIR SCRATCH VERSION SAMPLE_CONFIG
#   check_deb.sh purge SCRATCH
#
# install (ctest ops.deb_install, the fixture's setup): cpack builds
# plumbline_VERSION_amd64.deb from the build tree into SCRATCH; its control
# fields, Depends (dpkg-shlibdeps, and that apt resolves them: apt-get -s),
# conffiles and file list are checked;
# then `dpkg --root=SCRATCH/root --force-script-chrootless -i` installs it
# into a fresh root, under fakeroot when not run as root. dpkg then runs the
# real maintainer scripts with DPKG_ROOT set, and they work under that root
# only (useradd --prefix, no systemctl), so the test sees what postinst does
# (the user, /etc/plumbline/sets, nothing enabled) on no machine but the
# scratch root. A chroot would need root and a whole Debian inside it; a
# container is not there on the CI machine. The installed programs, man
# pages and completion are then checked; ops.DebPackageTest starts the
# installed plumbd.
#
# purge (ctest ops.deb_purge, the fixture's cleanup): `dpkg --purge` in the
# same root; the package's files and /etc/plumbline go, the user stays.
set -eu
# dpkg and useradd live in sbin, which a user's PATH may lack.
export PATH="$PATH:/usr/sbin:/sbin"

fail() { echo "ops.deb: $*" >&2; exit 1; }
as_root() {
  if [ "$(id -u)" -eq 0 ]; then "$@"; else fakeroot "$@"; fi
}
dpkg_root() {
  as_root dpkg --root="$root" --force-script-chrootless --force-depends \
    --log="$root/var/log/dpkg.log" "$@"
}

mode=$1
if [ "$mode" = purge ]; then
  scratch=$2 root=$2/root
  [ -d "$root/var/lib/dpkg" ] || fail "no scratch root in $root (ops.deb_install did not run)"
  dpkg_root --purge plumbline >"$scratch/purge.log" 2>&1 ||
    { cat "$scratch/purge.log"; fail "dpkg --purge failed"; }
  for f in usr/bin/plumbd usr/bin/plumbctl lib/systemd/system/plumbd.service \
           etc/plumbline usr/share/man/man8/plumbd.8.gz; do
    [ ! -e "$root/$f" ] || fail "/$f still there after purge"
  done
  grep -q '^plumbline:' "$root/etc/passwd" ||
    fail "purge removed the user plumbline (files it owns may remain)"
  echo "ops.deb_purge: purged; the user plumbline is kept"
  exit 0
fi

[ "$mode" = install ] || fail "usage: check_deb.sh install|purge ..."
cpack=$2 build=$3 scratch=$4 version=$5 sample=$6
root=$scratch/root
rm -rf "$scratch"
mkdir -p "$scratch"

# ---- Build.
"$cpack" --config "$build/CPackConfig.cmake" -B "$scratch" \
  >"$scratch/cpack.log" 2>&1 || { cat "$scratch/cpack.log"; fail "cpack failed"; }
deb=$scratch/plumbline_${version}_amd64.deb
[ -f "$deb" ] || { cat "$scratch/cpack.log"; fail "cpack wrote no $deb"; }
echo "built $(basename "$deb") ($(du -k "$deb" | cut -f1) KiB)"

# ---- Control fields.
field() { dpkg-deb --field "$deb" "$1"; }
[ "$(field Package)" = plumbline ] || fail "Package is '$(field Package)'"
[ "$(field Version)" = "$version" ] || fail "Version is '$(field Version)', not $version"
[ "$(field Architecture)" = amd64 ] || fail "Architecture is '$(field Architecture)'"
depends=$(field Depends)
echo "Depends: $depends"
# From dpkg-shlibdeps: the C and C++ runtimes and the libraries the
# programs link (gRPC, protobuf, SQLite for plumbd); passwd for useradd.
for pkg in libc6 libstdc++6 'libgrpc++' libprotobuf libsqlite3 passwd; do
  case ", $depends" in
    *", $pkg"*) ;;
    *) fail "Depends has no $pkg: $depends" ;;
  esac
done
[ "$(dpkg-deb --info "$deb" conffiles)" = /etc/plumbline/plumbd.json ] ||
  fail "conffiles is not /etc/plumbline/plumbd.json"
for script in postinst prerm postrm; do
  dpkg-deb --info "$deb" "$script" >/dev/null ||
    fail "no $script in the package"
done

# apt resolves every Depends (names and versions) on this machine: the
# install `apt-get install ./plumbline_*.deb` would do, only simulated
# (apt-get -s changes nothing).
apt-get -s install "$deb" >"$scratch/apt.log" 2>&1 ||
  { cat "$scratch/apt.log"; fail "apt-get -s install cannot resolve the package"; }
grep -q '^Inst plumbline ' "$scratch/apt.log" ||
  { cat "$scratch/apt.log"; fail "apt-get -s install would not install plumbline"; }

# ---- Files: Debian's places, nothing under /usr/local.
contents=$(dpkg-deb --contents "$deb" | awk '{print $6}')
for f in ./usr/bin/plumbd ./usr/bin/plumbctl ./lib/systemd/system/plumbd.service \
         ./etc/plumbline/plumbd.json ./usr/share/man/man8/plumbd.8.gz \
         ./usr/share/man/man1/plumbctl.1.gz \
         ./usr/share/bash-completion/completions/plumbctl \
         ./usr/share/doc/plumbline/copyright \
         ./usr/share/plumbline/plumbd.production.json; do
  echo "$contents" | grep -qx "$f" || fail "the package has no ${f#.}"
done
if echo "$contents" | grep -q '^\./usr/local/'; then
  fail "the package installs under /usr/local"
fi

# ---- Install into the scratch root.
mkdir -p "$root/var/lib/dpkg/info" "$root/var/lib/dpkg/updates" \
  "$root/var/log" "$root/etc"
: >"$root/var/lib/dpkg/status"
: >"$root/var/lib/dpkg/available"
printf 'root:x:0:0:root:/root:/bin/sh\n' >"$root/etc/passwd"
printf 'root:x:0:\n' >"$root/etc/group"
printf 'root:*:19000:0:99999:7:::\n' >"$root/etc/shadow"
printf 'root:*::\n' >"$root/etc/gshadow"
dpkg_root --install "$deb" >"$scratch/install.log" 2>&1 ||
  { cat "$scratch/install.log"; fail "dpkg --install failed"; }
cat "$scratch/install.log"
dpkg-query --admindir="$root/var/lib/dpkg" -W -f='${Status}\n' plumbline |
  grep -qx 'install ok installed' || fail "plumbline is not 'install ok installed'"

# What postinst made: the system user and group, the sets directory;
# nothing enabled or started.
user=$(grep '^plumbline:' "$root/etc/passwd") || fail "postinst made no user plumbline"
case "$user" in
  *:/var/lib/plumbline:/usr/sbin/nologin) ;;
  *) fail "user plumbline is '$user'" ;;
esac
grep -q '^plumbline:' "$root/etc/group" || fail "postinst made no group plumbline"
[ -d "$root/etc/plumbline/sets" ] || fail "postinst made no /etc/plumbline/sets"
[ ! -e "$root/etc/systemd/system/multi-user.target.wants/plumbd.service" ] ||
  fail "the package enabled plumbd.service"
cmp -s "$sample" "$root/etc/plumbline/plumbd.json" ||
  fail "/etc/plumbline/plumbd.json is not the sample config"
unit=$root/lib/systemd/system/plumbd.service
grep -q '^ExecStart=/usr/bin/plumbd --config /etc/plumbline/plumbd.json$' "$unit" ||
  fail "the unit does not start /usr/bin/plumbd with /etc/plumbline/plumbd.json"
grep -q '^User=plumbline$' "$unit" || fail "the unit does not run as plumbline"

# The installed programs, man pages and completion.
[ "$("$root/usr/bin/plumbd" --version)" = "plumbd $version" ] ||
  fail "installed plumbd --version: $("$root/usr/bin/plumbd" --version)"
[ "$("$root/usr/bin/plumbctl" --version)" = "plumbctl $version" ] ||
  fail "installed plumbctl --version"
man8=$(gzip -dc "$root/usr/share/man/man8/plumbd.8.gz")
echo "$man8" | grep -q '^\.TH PLUMBD "8" .*"plumbd '"$version"'"' ||
  fail "plumbd.8 has no .TH line for version $version"
for word in '\-\-config' '\-\-ready_file' SIGHUP /etc/plumbline/plumbd.json; do
  echo "$man8" | grep -qF -- "$word" || fail "plumbd.8 does not mention $word"
done
man1=$(gzip -dc "$root/usr/share/man/man1/plumbctl.1.gz")
echo "$man1" | grep -q '^\.TH PLUMBCTL "1"' || fail "plumbctl.1 has no .TH line"
for word in '.SS "plumbctl approve:"' '.SS "plumbctl token new:"' \
            PLUMBLINE_TOKEN '\-\-format'; do
  echo "$man1" | grep -qF -- "$word" || fail "plumbctl.1 does not mention $word"
done
completion=$root/usr/share/bash-completion/completions/plumbctl
bash -c ". '$completion' && complete -p plumbctl" | grep -q -- '-F _plumbctl plumbctl' ||
  fail "the completion does not register _plumbctl for plumbctl"
echo "ops.deb_install: installed into $root"
