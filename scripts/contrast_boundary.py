"""Is any pair of colours exactly at the hidden-text contrast threshold?

``wzq.io.workbook.reader.values.unseen`` names a value whose text colour on its fill
has a WCAG 2.1 contrast ratio below ``MIN_CONTRAST`` (1.5). Whether the boundary is
``<`` or ``<=`` matters only for a pair of colours whose ratio, as the function
computes it in floating point, is exactly 1.5. This script settles it for every pair
of the 16,777,216 ``RRGGBB`` colours (theme and indexed colours resolve to these): it
computes each colour's luminance as ``values._luminance`` does (the same operations
in the same order, checked bit for bit on a sample), sorts them, and for each colour
looks at the colours whose luminance lies nearest 1.5 times its own (three distinct
values each side), the only ones whose ratio can round to 1.5.

Run: ``python3 scripts/contrast_boundary.py`` (about 15 s, 1 GB). Prints the number
of pairs at exactly the threshold (0: the mutant ``unseen`` 35 in docs/mutation.md
is equivalent) and the closest ratio's distance from it.
"""

from __future__ import annotations

import numpy as np

from wzq.io.workbook.reader.values import MIN_CONTRAST, _luminance


def main() -> None:
    lin = []
    for v in range(256):  # the function's own linearisation, in Python floats
        c = v / 255
        lin.append(c / 12.92 if c <= 0.04045 else ((c + 0.055) / 1.055) ** 2.4)
    ch = np.array(lin)
    r, g, b = np.meshgrid(np.arange(256), np.arange(256), np.arange(256), indexing="ij")
    lum = ((0.2126 * ch[r] + 0.7152 * ch[g]) + 0.0722 * ch[b]).ravel()
    for code in np.random.default_rng(1).integers(0, lum.size, 20_000):
        assert lum[code] == _luminance(f"{code:06X}"), f"{code:06X}"
    shifted = np.unique(lum + 0.05)  # sorted, distinct
    near = np.searchsorted(shifted, shifted * MIN_CONTRAST)
    exact, closest = 0, np.inf
    for d in range(-3, 4):
        hi = shifted[np.clip(near + d, 0, shifted.size - 1)]
        ratio = hi / shifted
        exact += int(np.count_nonzero(ratio == MIN_CONTRAST))
        closest = min(closest, float(np.min(np.abs(ratio - MIN_CONTRAST))))
    print(f"colours: {lum.size:,}; distinct luminances: {shifted.size:,}")
    print(f"pairs at a contrast of exactly {MIN_CONTRAST}: {exact}")
    print(f"closest ratio: {closest:.3g} from it")


if __name__ == "__main__":
    main()
