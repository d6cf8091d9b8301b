#!/usr/bin/env bash
# habcast as a user gets it, away from the build tree:
#   installed_tree.sh install BUILD_DIR SOURCE_DIR VERSION
#     `cmake --install BUILD_DIR --prefix <scratch>/opt/habcast`, and the default prefix under a
#     DESTDIR;
#   installed_tree.sh deb BUILD_DIR SOURCE_DIR VERSION
#     the Debian package from scripts/package.sh, unpacked with dpkg -x into a scratch root, plus
#     its Depends (covering every library the binary loads, resolvable by apt).
# Both check the layout (binary, manual pages of every command, completion, docs, exporters,
# sample data), that the binary holds no source or build path, `--version`, and `predict` on the
# installed sample data, run from elsewhere, leaving the installed tree untouched.
# Exit 77 (ctest: skipped) in deb mode when BUILD_DIR has no package newer than its habcast
# binary; build it with scripts/package.sh BUILD_DIR (scripts/test.sh does).
set -euo pipefail
# No `producer | grep -q` under pipefail (an early grep exit kills the producer with SIGPIPE and
# the pipeline fails at random): text goes to files or variables first.
mode=$1
build=$(cd "$2" && pwd)
source_dir=$(cd "$3" && pwd)
version=$4
fail() { echo "FAIL: $*" >&2; exit 1; }

scratch=$(mktemp -d)
trap 'rm -rf "$scratch"' EXIT

case $mode in
  install)
    prefix=$scratch/opt/habcast
    cmake --install "$build" --prefix "$prefix" >/dev/null
    # Debuggers' sections (builds with -g) record where the sources were; a program cannot use
    # them, and `cmake --install --strip` drops them. Look at what the program itself holds.
    objcopy --strip-debug "$prefix/bin/habcast" "$scratch/habcast.nodebug"
    binary_text=$scratch/habcast.nodebug
    # The default prefix (/usr/local unless configured otherwise) lays out the same way.
    default_prefix=$(awk -F= '/^CMAKE_INSTALL_PREFIX:/ {print $2}' "$build/CMakeCache.txt")
    DESTDIR=$scratch/destdir cmake --install "$build" >/dev/null
    for f in bin/habcast share/man/man1/habcast.1.gz share/habcast/sample-rasters/demo-model.toml; do
      [[ -f $scratch/destdir$default_prefix/$f ]] || fail "the default prefix $default_prefix lacks $f"
    done
    ;;
  deb)
    deb=$build/package/habcast_${version}_$(dpkg --print-architecture).deb
    if [[ ! -f $deb ]]; then
      echo "SKIP: no package $deb; build it with scripts/package.sh $build" >&2
      exit 77
    fi
    if [[ $build/habcast -nt $deb ]]; then
      echo "SKIP: $deb is older than $build/habcast; rebuild it with scripts/package.sh $build" >&2
      exit 77
    fi
    dpkg -x "$deb" "$scratch/root"
    prefix=$scratch/root/usr
    binary_text=$prefix/bin/habcast
    [[ -f $prefix/share/doc/habcast/copyright && -f $prefix/share/doc/habcast/changelog.gz ]] ||
      fail "the package lacks copyright or changelog.gz"
    ;;
  *) fail "unknown mode $mode (install or deb)" ;;
esac
bin=$prefix/bin/habcast
share=$prefix/share

# Layout.
[[ -x $bin ]] || fail "no executable bin/habcast"
for f in doc/habcast/README.md doc/habcast/model-format.md doc/habcast/exit-codes.md man/man1/habcast.1.gz \
  bash-completion/completions/habcast habcast/exporters/export_habcast_model.R \
  habcast/exporters/export_habcast_model.py habcast/sample-rasters/demo-model.toml \
  habcast/sample-rasters/training.csv habcast/sample-rasters/batch-demo.toml; do
  [[ -f $share/$f ]] || fail "no share/$f"
done
help=$("$bin" --help)
while read -r command; do
  [[ -f $share/man/man1/habcast-$command.1.gz ]] || fail "no manual page for the command $command"
done < <(awk '/^Subcommands:/ {on = 1; next} on && /^  [a-z]/ {print $1}' <<<"$help")

# Nothing of the build or source tree in the binary: it could only be looked for at run time.
# A sanitizer build is a developer's build: UBSan and ASan embed each check's source file so a
# report can name file:line, so there the paths are expected and this check does not apply.
sanitized=$(awk -F= '/^HABCAST_SANITIZE:/ {print $2}' "$build/CMakeCache.txt")
if [[ $sanitized == ON ]]; then
  echo "note: sanitizer build; source paths in the binary are its report locations, not checked"
else
  strings "$binary_text" >"$scratch/strings.txt"
  for path in "$source_dir" "$build"; do
    ! grep -qF "$path" "$scratch/strings.txt" || fail "bin/habcast contains the path $path"
  done
fi

if [[ $mode == deb ]]; then
  # Depends: computed by dpkg-shlibdeps, so every shared library the binary loads is covered.
  depends=$(dpkg-deb --field "$deb" Depends)
  [[ -n $depends ]] || fail "the package declares no Depends"
  while read -r soname; do
    lib=$(ldconfig -p | awk -v so="$soname" '$1 == so && !found {print $NF; found = 1}')  # no early exit: SIGPIPE under pipefail
    [[ -n $lib ]] || fail "the binary needs $soname, which this system does not have"
    # dpkg knows a library by the path its package installed (merged /usr: maybe not the real one).
    owner=$( (dpkg -S "$lib" || dpkg -S "$(readlink -f "$lib")") 2>/dev/null | awk -F: 'NR == 1 {print $1}')
    [[ -n $owner ]] || fail "no Debian package owns $lib ($soname)"
    depends_names=$(tr ',|' '\n\n' <<<"$depends" | awk '{print $1}')
    grep -qxF -- "$owner" <<<"$depends_names" || fail "Depends ($depends) lacks $owner, which provides $soname"
  done < <(objdump -p "$bin" | awk '$1 == "NEEDED" {print $2}')
  # ... and apt can satisfy them on this system (a simulation: nothing is installed).
  if command -v apt-get >/dev/null; then
    apt-get install --simulate --no-download -qq "$deb" >"$scratch/apt.log" 2>&1 ||
      fail "apt cannot install the package: $(cat "$scratch/apt.log")"
  fi
fi

# --version names the libraries.
versions=$("$bin" --version)
for lib in GDAL PROJ Eigen Qhull; do grep -q "^$lib [0-9]" <<<"$versions" || fail "--version lacks $lib: $versions"; done
[[ $(head -n1 <<<"$versions") == "habcast $version" ]] || fail "--version does not start with 'habcast $version'"

# predict on the installed sample data, run from elsewhere; the installed tree stays untouched.
before=$(cd "$prefix" && find . -printf '%p %s %T@\n' | sort)
# As a user would run it: no GDAL_DATA or PROJ_DATA pointing anywhere (the test runner sets them).
(cd "$scratch" && env -u GDAL_DATA -u PROJ_DATA -u PROJ_LIB \
  "$bin" predict "$share/habcast/sample-rasters/demo-model.toml" -o out --threads 2 -q 2>predict.log) ||
  fail "predict on the installed sample data failed: $(cat "$scratch/predict.log")"
for f in suitability.tif uncertainty.tif extrapolation.tif report.json; do
  [[ -s $scratch/out/$f ]] || fail "predict wrote no $f"
done
grep -q '"libraries"' "$scratch/out/report.json" || fail "report.json records no library versions"
after=$(cd "$prefix" && find . -printf '%p %s %T@\n' | sort)
[[ $before == "$after" ]] || fail "predict changed the installed tree: $(diff <(echo "$before") <(echo "$after") | head)"
echo "installed habcast ($mode) has its files, no build path, and predicts on its own sample data"
