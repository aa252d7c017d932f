"""The names of the shift laws, in one place.

The registry keys (:data:`LAW_MODELS`), the laws ``"auto"`` compares (:data:`AUTO_MODELS`) and
the titles the report and the figures show. Every other place that lists the laws (the law
classes, the build's choices, the command line's ``--law``) reads them from here. This module
imports nothing, so the command line can read the names without loading the laws.
"""

from __future__ import annotations

__all__ = ["WLF", "ARRHENIUS", "WLF_ARRHENIUS", "VFT", "POLYNOMIAL", "LAW_MODELS", "AUTO_MODELS",
           "LAW_TITLES", "LAW_SHORT_TITLES"]

WLF = "wlf"
ARRHENIUS = "arrhenius"
WLF_ARRHENIUS = "wlf-arrhenius"
VFT = "vft"
POLYNOMIAL = "polynomial"

#: Every shift law, in the order they are listed to users.
LAW_MODELS: tuple[str, ...] = (WLF, ARRHENIUS, WLF_ARRHENIUS, VFT, POLYNOMIAL)

#: Laws compared by ``fit_shift_law(model="auto")``, in order of preference on a tie.
#: VFT is left out: it is the same law as WLF written with other constants (T_inf = T_ref - C2,
#: B = C1 C2), so it would always tie with WLF; convert a WLF result with ``.to_vft()``.
#: The polynomial is left out too: an empirical law, it fits on request only. On the real
#: binders of the benchmark, built without their 46 °C isotherm, it won the leave-one-out
#: comparison on five of five and then missed that isotherm's shift by 0.07 decade (14-17 %
#: rms on G′ and G″), where WLF missed it by 0.02 (5-6 %).
AUTO_MODELS: tuple[str, ...] = (WLF, ARRHENIUS, WLF_ARRHENIUS)

#: Titles of the laws in the report.
LAW_TITLES: dict[str, str] = {WLF: "WLF", ARRHENIUS: "Arrhenius",
                              WLF_ARRHENIUS: "WLF above Tg, Arrhenius below",
                              VFT: "Vogel–Fulcher–Tammann (VFT)", POLYNOMIAL: "Polynomial"}

#: Short titles of the laws in figures.
LAW_SHORT_TITLES: dict[str, str] = {WLF: "WLF", ARRHENIUS: "Arrhenius",
                                    WLF_ARRHENIUS: "WLF/Arrhenius", VFT: "VFT",
                                    POLYNOMIAL: "Polynomial"}
