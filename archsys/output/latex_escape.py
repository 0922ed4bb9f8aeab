"""LaTeX text-mode escaping of names and labels (shared by the table model and the LaTeX renderer)."""
from __future__ import annotations

import unicodedata

__all__ = ["escape"]

_SPECIAL = {"\\": r"\textbackslash{}", "&": r"\&", "%": r"\%", "$": r"\$", "#": r"\#", "_": r"\_",
            "{": r"\{", "}": r"\}", "~": r"\textasciitilde{}", "^": r"\textasciicircum{}",
            "–": "--", "—": "---", "−": "$-$", "±": r"$\pm$", "⊕": r"$\oplus$", "☉": r"$\odot$",
            "★": r"$\star$", "°": r"$^\circ$", "≥": r"$\geq$", ">": "$>$", "<": "$<$", "|": r"$|$",
            "≤": r"$\leq$", "×": r"$\times$", "∞": r"$\infty$", "†": r"$^\dagger$", "₁": "$_{1}$", "₀": "$_{0}$",
            "⁻": "$^{-}$", "³": "$^{3}$", "¹": "$^{1}$", "²": "$^{2}$"}
_GREEK_ALT = {"lamda": "lambda", "epsilon": "epsilon"}


def _greek(ch):
    try:
        name = unicodedata.name(ch)
    except ValueError:
        return None
    for pre, upper in (("GREEK SMALL LETTER ", False), ("GREEK CAPITAL LETTER ", True)):
        if name.startswith(pre):
            word = name[len(pre):].lower()
            if " " in word:
                return None
            word = _GREEK_ALT.get(word, word)
            if upper:
                if word in {"alpha", "beta", "epsilon", "zeta", "eta", "iota", "kappa", "mu", "nu",
                            "omicron", "rho", "tau", "chi"}:
                    return None   # Latin look-alikes: keep the character
                word = word.capitalize()
            return f"$\\{word}$"
    return None


def escape(text) -> str:
    """``text`` safe for LaTeX text mode (special characters and Greek letters mapped)."""
    out = []
    for ch in str(text):
        if ch in _SPECIAL:
            out.append(_SPECIAL[ch])
        elif ord(ch) > 127 and (g := _greek(ch)):
            out.append(g)
        else:
            out.append(ch)
    return "".join(out)
