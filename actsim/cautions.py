"""The caution printed with every actsim summary, check table and report.

actsim predicts; it does not measure. Light sources that drive actuators are
often UV or intense visible light, and strips may be worn against the skin, so
every output that carries a verdict also carries this caution.
"""

from __future__ import annotations

import textwrap

__all__ = ["CAUTION", "caution_lines", "with_caution"]

#: One short paragraph, printed with every summary, check table and report.
CAUTION = (
    "CAUTION: these are model predictions, not measurements; measure the real exposure, temperature and loads "
    "before use. UV and intense light harm eyes and skin: use shielding and suitable eye and skin protection. "
    "Worn or body-contact devices must meet the applicable medical-device and local regulations and be reviewed "
    "by qualified people. A verdict never means \"safe\": it says \"within the modelled limit of <standard>\", "
    "for the model, data and assumptions stated."
)


def caution_lines(width: int = 100) -> list[str]:
    """The caution wrapped into lines of at most ``width`` characters.

    Parameters
    ----------
    width : int
        Maximum line length [characters].

    Returns
    -------
    list of str
        The lines of :data:`CAUTION`, in order.
    """
    return textwrap.wrap(CAUTION, width=max(int(width), 20))


def with_caution(text: str, width: int = 100) -> str:
    """Return ``text`` followed by a blank line and the wrapped caution.

    Parameters
    ----------
    text : str
        A summary or a check table.
    width : int
        Maximum caution line length [characters].

    Returns
    -------
    str
        ``text``, then the caution paragraph.
    """
    return text.rstrip("\n") + "\n\n" + "\n".join(caution_lines(width))
