#!/usr/bin/env bash
# Installs covey from BUILD_DIR into a temporary prefix, builds tests/install/consumer against
# it with find_package(covey), checks the pkg-config file, and compares the consumer's log Z with
# `covey exact --json` from the installed binary on the same data. Exit 0 on success.
set -euo pipefail
source_dir=$1
build_dir=$2
cmake_command=${3:-cmake}
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
prefix=$work/prefix
"$cmake_command" --install "$build_dir" --prefix "$prefix" >/dev/null
for f in bin/covey include/covey/covey.hpp include/covey/core/version.hpp \
         lib/cmake/covey/coveyConfig.cmake lib/pkgconfig/covey.pc; do
  [ -e "$prefix/$f" ] || { echo "not installed: $f"; exit 1; }
done
# No private header may be installed.
if find "$prefix/include" -name 'h5.hpp' -o -name 'mpi_context.hpp' -o -name 'progress.hpp' | grep -q .; then
  echo "a private header was installed"; exit 1
fi
PKG_CONFIG_PATH=$prefix/lib/pkgconfig pkg-config --cflags --libs covey >/dev/null
"$cmake_command" -S "$source_dir/tests/install/consumer" -B "$work/consumer" \
  -DCMAKE_PREFIX_PATH="$prefix" -DCMAKE_BUILD_TYPE=Release >/dev/null
"$cmake_command" --build "$work/consumer" -j 2 >/dev/null
data=$source_dir/examples/orchard_inspections.csv
cut -d, -f1-6 "$data" > "$work/six.csv"
"$work/consumer/consumer" "$work/six.csv" > "$work/consumer.txt"
cat "$work/consumer.txt"
"$prefix/bin/covey" score "$work/six.csv" -o "$work/six.h5" --max-indegree 2 >/dev/null
"$prefix/bin/covey" exact "$work/six.h5" --json > "$work/exact.json"
python3 - "$work/consumer.txt" "$work/exact.json" <<'PY'
import json, sys
consumer = dict(line.split(' ', 1) for line in open(sys.argv[1]).read().splitlines())
exact = json.load(open(sys.argv[2]))
log_z = float(consumer['log_z'])
found = [v for k, v in exact.items() if k in ('log_z', 'log_total_weight')]
if not found:
    sys.exit('covey exact --json holds no log Z: keys ' + ', '.join(exact))
if abs(found[0] - log_z) > 1e-6 * max(1.0, abs(log_z)):
    sys.exit(f'consumer log Z {log_z} differs from covey exact {found[0]}')
print('installed covey and the consumer agree')
PY
