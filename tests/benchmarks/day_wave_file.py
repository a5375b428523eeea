"""Write a day version of a network file: each demand's rate (traffic / holding) times a
wave sampled at P points over 24 hours (the wave of bench_daily.py's section 5).

    python tests/benchmarks/day_wave_file.py P networks/regional-telephone.yaml OUT.yaml

Demo data for docs/measurements/daily.md section 7, not a check value.
"""

import sys

import numpy as np
import yaml


def main(argv):
    periods, src, out = int(argv[0]), argv[1], argv[2]
    wave = np.interp(np.linspace(0, 23, periods), [0, 6, 9, 12, 15, 18, 23],
                     [0.05, 0.3, 1, 0.7, 0.9, 0.4, 0.05])
    with open(src, encoding="utf-8") as f:
        d = yaml.safe_load(f)
    hold = d.get("defaults", {}).get("holding", 1.0)
    for dem in d["demands"]:
        rate = dem.pop("traffic") / dem.get("holding", hold)
        dem["rates"] = [round(float(rate * w), 3) for w in wave]
    d.setdefault("defaults", {})["period"] = 24 / periods
    with open(out, "w", encoding="utf-8") as f:
        yaml.safe_dump(d, f, sort_keys=False)


if __name__ == "__main__":
    main(sys.argv[1:])
