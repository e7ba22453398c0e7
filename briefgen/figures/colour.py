"""Colour measures the figure review and the brand check share.

Contrast follows WCAG 2.1's definitions of relative luminance and contrast ratio.
Colour-vision deficiency is simulated with Machado, Oliveira & Fernandes (2009) as
colorspacious implements it, and distances are measured in CAM02-UCS (Luo, Cui & Li
2006), the space colorspacious recommends for perceptual differences. Lightness for a
grayscale print is CIE L* (CIE 1976 L*a*b*, D65 white).
"""

from __future__ import annotations

from collections.abc import Sequence

import colorspacious
import numpy as np
from matplotlib.colors import to_rgb, to_rgba

RGB = tuple[float, float, float]

WHITE: RGB = (1.0, 1.0, 1.0)
CVD_TYPES = ("deuteranomaly", "protanomaly", "tritanomaly")
# Severity 100 is the strongest form Machado et al. model (the -anopia): a palette that
# stays apart there stays apart for every milder form of the same deficiency.
CVD_SEVERITY = 100

# WCAG 2.1, 1.4.11 Non-text Contrast: graphical objects need 3:1 against adjacent colours.
MARK_CONTRAST = 3.0
# WCAG 2.1, 1.4.3 Contrast (Minimum): text needs 4.5:1 (3:1 only for large text, which
# figure text never is at 8 to 10 pt).
TEXT_CONTRAST = 4.5
# Smallest CAM02-UCS distance between two category colours as a reader with a colour-vision
# deficiency sees them. Common practice, no published source: about 1 unit is a just
# noticeable difference in CAM02-UCS, and categorical palettes are usually held to ten times
# that so neighbours are told apart at a glance, not by close comparison. The shipped series
# colours keep at least 11.0 under every simulation (tests/test_figures_review.py).
MIN_CVD_DISTANCE = 10.0
# Smallest CIE L* gap between two series that have no second channel (marker, line style or
# fill) to tell them apart in grayscale. Common practice, no published source: about 20 L*
# units survives a laser printer's halftone.
MIN_LIGHTNESS_GAP = 20.0


def rgb(colour) -> RGB:
    """Any matplotlib colour as sRGB in 0..1 (alpha dropped)."""
    red, green, blue = to_rgb(colour)
    return (float(red), float(green), float(blue))


def over(colour, background: RGB = WHITE) -> RGB:
    """A colour with its alpha composited over an opaque background ("source over")."""
    red, green, blue, alpha = to_rgba(colour)
    return tuple(
        float(alpha * c + (1 - alpha) * b)
        for c, b in zip((red, green, blue), background, strict=True)
    )


def relative_luminance(colour) -> float:
    """WCAG 2.1 relative luminance: linearised sRGB weighted 0.2126, 0.7152, 0.0722.

    The linearisation threshold 0.03928 is WCAG 2.1's (sRGB's own is 0.04045; no 8-bit
    value lies between them, so both give the same result).
    """
    channels = np.array(rgb(colour))
    linear = np.where(channels <= 0.03928, channels / 12.92, ((channels + 0.055) / 1.055) ** 2.4)
    return float(linear @ np.array([0.2126, 0.7152, 0.0722]))


def contrast_ratio(first, second) -> float:
    """WCAG 2.1 contrast ratio (L1 + 0.05) / (L2 + 0.05), lighter over darker: 1 to 21."""
    lighter, darker = sorted((relative_luminance(first), relative_luminance(second)), reverse=True)
    return (lighter + 0.05) / (darker + 0.05)


def simulate(colour, deficiency: str, severity: float = CVD_SEVERITY) -> RGB:
    """The colour as a reader with ``deficiency`` sees it (Machado et al. 2009), clipped to sRGB."""
    space = {"name": "sRGB1+CVD", "cvd_type": deficiency, "severity": severity}
    seen = np.clip(colorspacious.cspace_convert(rgb(colour), space, "sRGB1"), 0, 1)
    return (float(seen[0]), float(seen[1]), float(seen[2]))


def distance(first, second) -> float:
    """Perceptual distance between two colours in CAM02-UCS (colorspacious.deltaE)."""
    return float(colorspacious.deltaE(rgb(first), rgb(second), input_space="sRGB1"))


def lightness(colour) -> float:
    """CIE L* (0 black to 100 white): what a grayscale print keeps of a colour."""
    return float(colorspacious.cspace_convert(rgb(colour), "sRGB1", "CIELab")[0])


def closest_pair_seen(colours: Sequence, deficiency: str) -> tuple[float, int, int]:
    """The smallest CAM02-UCS distance between any two colours under one simulation."""
    seen = [simulate(c, deficiency) for c in colours]
    best = (float("inf"), -1, -1)
    for i in range(len(seen)):
        for j in range(i + 1, len(seen)):
            best = min(best, (distance(seen[i], seen[j]), i, j))
    return best


def darkened_to(colour, ratio: float, background: RGB = WHITE) -> str:
    """The colour scaled towards black until it reaches ``ratio`` on ``background``, as #rrggbb.

    Scaling every channel keeps the hue; used to suggest a brand colour that passes.
    """
    base = np.array(rgb(colour))
    for step in range(101):
        candidate = base * (1 - step / 100)
        hex_colour = "#" + "".join(f"{round(c * 255):02x}" for c in candidate)
        if contrast_ratio(hex_colour, background) >= ratio:
            return hex_colour
    return "#000000"
