"""Write the regional network with rates = file rate x a wave of P periods."""
import sys, re
import numpy as np
import yaml
P = int(sys.argv[1]); src = sys.argv[2]; out = sys.argv[3]
wave = np.interp(np.linspace(0, 23, P), [0, 6, 9, 12, 15, 18, 23], [0.05, 0.3, 1, 0.7, 0.9, 0.4, 0.05])
d = yaml.safe_load(open(src))
hold = d.get("defaults", {}).get("holding", 1.0)
for dem in d["demands"]:
    rate = dem.pop("traffic") / dem.get("holding", hold)
    dem["rates"] = [round(float(rate * w), 3) for w in wave]
d.setdefault("defaults", {})["period"] = 24 / P
yaml.safe_dump(d, open(out, "w"), sort_keys=False)
