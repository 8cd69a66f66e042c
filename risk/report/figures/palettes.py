"""Colours of the figures without seaborn (its import, and matplotlib's pyplot with it, cost
a run about 0.4-0.9 s): seaborn 0.13's "colorblind" palette and its "rocket" colour map
(Waskom 2021, J. Open Source Softw. 6(60), 3021; BSD-3-Clause), as seaborn defines them
(the map's 256 entries to 16 bits, 8e-6 at most from seaborn's values), and a palette sampled
from a colour map as ``seaborn.color_palette(name, n)`` samples it.
"""

from __future__ import annotations

from typing import Final

import numpy as np
from matplotlib.colors import ListedColormap, to_rgb

#: seaborn's "colorblind" palette (10 colours, after Okabe and Ito's colour-blind-safe set).
COLORBLIND_HEX: Final = ("#0173b2", "#de8f05", "#029e73", "#d55e00", "#cc78bc", "#ca9161",
                         "#fbafe4", "#949494", "#ece133", "#56b4e9")

#: seaborn's "rocket" colour map: 256 RGB entries, each channel a big-endian 16-bit fraction.
_ROCKET_HEX: Final = (
    "02b704a119a603a8053e1a8f04b105e21b7d05d3068a1c70071007371d66086907e81e5e09dd089e1f590b62"
    "095720560ce20a1421550e5d0ad122550fd60b882357114b0c3b245a12bf0cea255e14310d95266415a20e3c"
    "276a17120ede287118810f7d297919f010182a821b6010af2b8b1ccf11422c951e3e11d22d9f1fae125e2eaa"
    "211f12e62fb52290136b30c1240313ec31cc2576146932d826ea14e333e4285f155934f029d615cc35fd2b4d"
    "163a37092cc616a738122e3f171039192fba17773a1c313617da3b1d32b3183b3c1b343118993d1535b118f4"
    "3e0d3732194d3f0138b419a33ff23a3719f640df3bbc1a4641c93d421a9442af3ec91adf439240511b284472"
    "41db1b6e454d43651bb2462544f11bf346fa467e1c3147ca480c1c6d4896499c1ca7495f4b2c1cde4a234cbe"
    "1d124ae44e511d444ba14fe41d744c5951791da14d0e530f1dcc4dbf54a61df44e6b563f1e1a4f1357d81e3e"
    "4fb759721e5f50575b0d1e7e50f35ca91e9a518a5e471eb4521d5fe51ecb52ac61841ee0533763241ef353be"
    "64c61f03544066681f1154be680b1f1c553869af1f2455ad6b541f2a561e6cfa1f2d568b6ea01f2e56f47048"
    "1f2c575871f11f2857b8739a1f20581475451f16586c76f01f0958bf789d1ef9590e7a4a1ee659597bf81ed0"
    "59a07da71eb759e27f571e9b5a2181081e7b5a5b82ba1e585a91846c1e325ac286201e085af087d41ddb5b19"
    "89891daa5b3f8b401d755b608cf61d3d5b7d8eae1d015b9590651cc35ba9921e1c825bb793d61c3d5bc1958f"
    "1bf65bc597491bac5bc599021b605bbe9abc1b125bb39c761ac15ba29e301a6f5b8b9fe91a1b5b6fa1a319c6"
    "5b4da35b19715b25a513191c5af7a6cb18c85ac3a88218755a89aa3818235a48abed17d35a02ada1178859b4"
    "af5217425961b10317015907b2b216c758a7b45f16955840b609166e57d3b7b11650575fb956163e56e5baf8"
    "163d5665bc97164955dfbe3316645553bfca169554c1c15e16d65429c2ee172b538dc479179652ebc6001814"
    "5245c78118aa519ac8fe195350ecca751a13503acbe71ae64f85cd531bcc4ececeb91cc64e14d01a1dd04d59"
    "d1751eed4c9cd2ca20174bdfd41a21514b21d56322964a63d6a723e749a6d7e5254448e9d91e26a8482dda51"
    "28154773db7f298a46badca92b034602ddcd2c83454ddeeb2e09449ae0042f9543eae1163129433fe22232c4"
    "4298e326346741f8e4233612415fe51737c540cee60339814047e6e73b453fcae7c13d113f5be8923ee53ef9"
    "e95940c03ea5ea1742a23e62eacb448a3e31eb7646773e12ec17486a3e07ecaf4a603e0fed404c593e2cedc7"
    "4e543e5eee4750513ea4eebf524e3efeef31544c3f6def9c56483feef00158444083f0615a3e4128f0bb5c36"
    "41e1f1115e2c42a9f16260204381f1af62114468f1f863ff455df23d65ec465ff27f67d4476ef2bf69ba4888"
    "f2fa6b9e49aef3336d7e4adef36a6f5c4c17f39e71364d59f3d0730f4ea5f3ff74e44ff9f42c76b75154f458"
    "788752b7f4817a555420f4a87c21558ff4cd7deb5700f4f17fb25876f514817759eff535833a5b6cf55484fb"
    "5cecf57286ba5e70f58f88775ff8f5aa8a326184f5c48bec6314f5dd8da464a8f5f58f5a663ff60b910e67db"
    "f61f92c1697bf63394736b1ff64696236cc7f65797d16e73f668997e7024f6779b2a71d9f6859cd47392f693"
    "9e7d754ff69fa0257711f6aba1cb78d8f6b6a3707aa3f6c0a5147c72f6caa6b67e46f6d3a857801ef6dca9f7"
    "81fbf6e4ab9583ddf6ecad3285c3f6f4aece87aef6fcb068899df704b2018b91f70cb3998d8af714b52f8f87"
    "f71db6c49189f726b858938ff730b9ea959af73bbb7b97a9f746bd0a99bcf753be989bd4f760c0249df1f770"
    "c1afa011f780c338a236f792c4c0a45ff7a6c646a68bf7bdc7caa8bcf7d5c94daaf0f7efcacfad28f80bcc4f"
    "af64f827cdcfb19ef844cf4fb3d8f862d0cfb611f880d24eb849f8a0d3cdba80f8c0d54cbcb6f8e1d6cbbeeb"
    "f904d84ac120f927d9c8c353f94cdb46c586f972dcc5c7b8f99ade42c9e8f9c3dfc0cc18f9ede13ece47fa19"
    "e2bbd075fa47e438d2a3fa76e5b6d4d0faa7e733d6fcfad9e8b0d928fb0dea2ddb54fb3bebaddd88"
)


def colorblind(n: int = 10) -> list[tuple[float, float, float]]:
    """The first ``n`` colours of the "colorblind" palette (cycled past 10)."""
    return [to_rgb(COLORBLIND_HEX[i % len(COLORBLIND_HEX)]) for i in range(n)]


def rocket_lut() -> np.ndarray:
    """The "rocket" colour map as a (256, 3) array of RGB fractions [-]."""
    raw = np.frombuffer(bytes.fromhex("".join(_ROCKET_HEX)), dtype=">u2")
    return (raw.astype(float) / 65535.0).reshape(256, 3)


def sampled(lut: np.ndarray, n: int) -> list[tuple[float, float, float]]:
    """``n`` colours of a listed colour map, at the centres of ``n`` equal bins, its two ends
    left out (as ``seaborn.color_palette`` samples a colour map)."""
    cmap = ListedColormap(lut)
    return [(float(c[0]), float(c[1]), float(c[2]))
            for c in cmap(np.linspace(0.0, 1.0, int(n) + 2)[1:-1])]
