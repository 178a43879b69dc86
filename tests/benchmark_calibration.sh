#!/bin/bash
# Benchmark of `backcomb calibrate` (prints figures; not a test): a
# four-entry fit to light J-V curves of the demo film at three gaps, on 2
# ranks. The "measured" data are the demo's own J-V (from `solve`), so the
# truth is known; the fit starts a factor 3 away from it.
#   bash tests/benchmark_calibration.sh build/app/backcomb [FOLDER]
set -euo pipefail
binary=$(realpath "$1")
here=$(cd "$(dirname "$0")/.." && pwd)
work=${2:-$(mktemp -d)}
mkdir -p "$work"
export OMPI_ALLOW_RUN_AS_ROOT=1 OMPI_ALLOW_RUN_AS_ROOT_CONFIRM=1
quick=(--set "J-V scan/Dark scan=false" --set "Output/Write fields=false" --set "J-V scan/Suns-Voc intensities=")
data=()
for gap in 10 20 40; do
  "$binary" solve "$here/cases/short-film.prm" --set "Geometry/Gap=$gap" "${quick[@]}" --out "$work/truth-$gap" --quiet > /dev/null
  file="$work/light-$gap.dat"
  {
    echo "kind = light J-V"
    echo "columns = V, mA/cm2"
    echo "current sign = generated positive"
    echo "device = Geometry/Gap=$gap"
    echo "data"
    # The scan's points at 0, 0.1, ..., 1.1 V.
    awk -F, 'NR > 2 && $2 != "" { v = $1 + 0; k = v * 10; if (v <= 1.1001 && (k - int(k + 0.5))^2 < 1e-12) print $1, $2 }' \
      "$work/truth-$gap/jv.csv"
  } > "$file"
  data+=(--data "$file")
done
start=$(date +%s.%N)
mpirun -np 2 --oversubscribe "$binary" calibrate "$here/cases/short-film.prm" "${data[@]}" \
  --fit "Absorber/Transport/Electron mobility=0.01:100" \
  --fit "Absorber/Transport/Hole mobility=0.01:100" \
  --fit "Absorber/Recombination/SRH/Electron lifetime=1e-9:1e-4" \
  --fit "Gap interface/Electron recombination velocity=1:1e5" \
  --set "Absorber/Transport/Electron mobility=6" --set "Absorber/Transport/Hole mobility=0.5" \
  --set "Absorber/Recombination/SRH/Electron lifetime=3e-6" \
  --set "Gap interface/Electron recombination velocity=300" \
  --out "$work/fit" --quiet || true
end=$(date +%s.%N)
python3 - "$work/fit/fit.json" "$start" "$end" <<'PY'
import json, sys
j = json.load(open(sys.argv[1]))
wall = float(sys.argv[3]) - float(sys.argv[2])
truth = {"Absorber/Transport/Electron mobility": 2, "Absorber/Transport/Hole mobility": 1.5,
         "Absorber/Recombination/SRH/Electron lifetime": 1e-6, "Gap interface/Electron recombination velocity": 100}
print(f"calibrate, 4 entries, light J-V at 3 gaps of the demo film, 2 ranks: {wall:.1f} s wall")
print(f"  {j['status']} ({j['reason']}), {j['iterations']} iterations, {j['solves']} solves "
      f"({wall / max(j['solves'], 1) * 2:.2f} s per solve and rank)")
print(f"  cost {j['cost_start']:.4g} -> {j['cost']:.4g}")
for e in j["entries"]:
    t = truth[e["entry"]]
    print(f"  {e['entry']}: {e['value']:.6g} (truth {t:g}, relative error {abs(e['value'] / t - 1):.1e})")
PY
