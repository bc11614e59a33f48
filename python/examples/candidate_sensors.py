"""Which sensor noise does the two-channel example tolerate? A sweep of the noise of one
channel as columns, then three candidate parts from a parts list, printed as small tables.

Run from the repository root after installing the module:
    python python/examples/candidate_sensors.py
"""

import concord

arch = concord.load("architectures/plovrant_swa2_mean.toml")
print(f"{arch.name} (concord {concord.version()})")
print(f"fault sites: {', '.join(arch.sites)}")

# Noise of channel hall_a from 0.2 to 1.2 (in the file's unit), six points, as columns.
columns = concord.sweep(arch, "channels.hall_a.sigma=0.2:1.2", points=6, tolerance=1e-9)
print(f"\n{'sigma':>6} {'SPFM':>9} {'residual FIT':>13} {'ASIL (SPFM)':>12}")
rows = zip(
    columns["channels.hall_a.sigma"], columns["spfm"], columns["residual_fit"], columns["asil_spfm"]
)
for sigma, spfm, fit, asil in rows:
    print(f"{sigma:6.2f} {spfm:9.6f} {fit:13.4g} {asil:>12}")

# A parts list (invented): the noise of each candidate written into the file, analysed.
parts = {"HX-100": 0.35, "HX-200": 0.50, "HX-300": 0.80}
print()
for part, sigma in parts.items():
    text = arch.source.replace("sigma = 0.50", f"sigma = {sigma}", 1)
    figures = concord.analyze(concord.loads(text, f"{part}.toml"), tolerance=1e-9)
    worst = min(site["dc_all_dangerous"] for site in figures["sites"])
    spfm = figures["metrics"]["spfm"]
    print(f"{part}: sigma {sigma:.2f}, SPFM {spfm:.6f}, lowest DC (all dangerous) {worst:.6f}")
