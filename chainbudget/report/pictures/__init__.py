"""The budget as pictures: one module per picture, each drawing from the budget and the
solved chain and saying in one line what it shows.

- ``response`` (`response`): magnitude (and phase) from the source to a node, as set and
  at each swept pot's ends;
- ``square`` (`square`): a square wave after the chain at a few frequencies, same settings;
- ``levels`` (`levels`): every node's nominal, max and clip level and noise floor, dBu;
- ``noise`` (`noise`): the output noise density over the band and its largest sources;
- ``headroom`` (`headroom`): every node's headroom across the band, as set and worst.

matplotlib is imported by these modules only; the command line loads them lazily.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, replace

from matplotlib.figure import Figure

from chainbudget.budget import Budget, budget_from
from chainbudget.budget.analysis import Analysis
from chainbudget.budget.supplies import loaded_analysis
from chainbudget.chainfile import Chain
from chainbudget.findings import findings as draw_findings
from chainbudget.report.pictures.style import drawing

# Square-wave fundamentals drawn unless asked otherwise, Hz (bass, mid, treble).
SQUARE_HZ = (50.0, 1_000.0, 10_000.0)


@dataclass(frozen=True)
class PictureInputs:
    """What the pictures read: the chain, its analysis (loaded rails, low line, as ``check``
    works it out) and its budget with the findings."""

    chain: Chain
    analysis: Analysis
    budget: Budget


def picture_inputs(chain: Chain) -> PictureInputs:
    """The analysis and budget ``check`` works out (`chainbudget.budget.compute`), with the
    analysis kept for the pictures that solve the chain again at other settings."""
    analysis = loaded_analysis(chain, corner="low")
    budget = budget_from(analysis)
    return PictureInputs(chain, analysis, replace(budget, findings=tuple(draw_findings(budget))))


@dataclass(frozen=True)
class PictureOptions:
    """``node``: the stage whose output the response and square pictures show (default: the
    last); ``phase``: add the phase to the response; ``square_hz``: square-wave frequencies."""

    node: str | None = None
    phase: bool = False
    square_hz: tuple[float, ...] = SQUARE_HZ


@dataclass(frozen=True)
class Picture:
    """A drawn picture and a one-line summary of what it shows (for logs and screen
    readers)."""

    name: str
    figure: Figure
    summary: str


Draw = Callable[[PictureInputs, PictureOptions], tuple[Figure, str]]


def _registry() -> dict[str, Draw]:
    from chainbudget.report.pictures import headroom, levels, noise, response, square

    return {
        "response": response.draw,
        "square": square.draw,
        "levels": levels.draw,
        "noise": noise.draw,
        "headroom": headroom.draw,
    }


NAMES = ("response", "square", "levels", "noise", "headroom")


def draw(name: str, inputs: PictureInputs, options: PictureOptions | None = None) -> Picture:
    """Draw picture ``name`` (one of `NAMES`) in the fixed style."""
    with drawing():
        figure, summary = _registry()[name](inputs, options or PictureOptions())
    return Picture(name, figure, f"{name}: {summary}")


def node_index(inputs: PictureInputs, options: PictureOptions) -> int:
    """The stage the response and square pictures show (KeyError for an unknown name)."""
    if options.node is None:
        return len(inputs.chain.stages) - 1
    return inputs.budget.node(options.node).index
