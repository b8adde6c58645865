"""Published or worked values of the decoupling indicators, against ours.

Run: ``python paper_checks/indicators.py``. Prints one line per check: source, published, ours.
"""

from __future__ import annotations

import evidence as ev

CHECKS = [
    # (source, published, ours)
    ("Tapio (2005) class: GDP +3 %, pressure -2 % (classification table, from memory)",
     "strong decoupling", ev.tapio_class(0.03, -0.02)[0]),
    ("Tapio (2005) class: GDP +3 %, pressure +1 %", "weak decoupling", ev.tapio_class(0.03, 0.01)[0]),
    ("Tapio (2005) class: GDP +3 %, pressure +3 %", "expansive coupling", ev.tapio_class(0.03, 0.03)[0]),
    ("Tapio (2005) class: GDP +3 %, pressure +5 %", "expansive negative decoupling",
     ev.tapio_class(0.03, 0.05)[0]),
    ("OECD (2002) factor: EP 100->95, GDP 100->110 (formula from memory)", "0.1364",
     f"{float(ev.decoupling_factor(100, 95, 100, 110)):.4f}"),
    ("Common practice: 3 % growth, -4.5 %/yr emissions -> about 7.3 %/yr intensity", "0.073",
     f"{ev.required_rate(activity_growth=0.03, pressure_change=-0.045):.3f}"),
    ("Common practice: 3 % growth, -7.8 %/yr emissions -> about 10.5 %/yr intensity", "0.105",
     f"{ev.required_rate(activity_growth=0.03, pressure_change=-0.078):.3f}"),
]


def main() -> int:
    width = max(len(c[0]) for c in CHECKS)
    failures = 0
    print(f"{'source':<{width}}  {'published':>30}  {'ours':>30}  same")
    for source, published, ours in CHECKS:
        same = str(published) == str(ours)
        failures += not same
        print(f"{source:<{width}}  {published:>30}  {ours:>30}  {'yes' if same else 'NO'}")
    return 1 if failures else 0


if __name__ == "__main__":
    raise SystemExit(main())
