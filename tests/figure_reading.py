"""Reading a matplotlib figure back for the figure tests: its texts and where they are drawn.

Figures are judged by what they draw (artists, labels, limits), not by the size
of the file they were saved to.
"""

from __future__ import annotations

import contextlib


def all_text(fig) -> str:
    """Every string the figure shows: figure texts, axes texts, titles, axis labels, legends."""
    texts = [t.get_text() for t in fig.texts]
    for ax in fig.axes:
        texts += [t.get_text() for t in ax.texts] + [ax.get_xlabel(), ax.get_ylabel(), ax.get_title(),
                                                     ax.get_title("left"), ax.get_title("right")]
        if ax.get_legend() is not None:
            texts += [t.get_text() for t in ax.get_legend().get_texts()]
    for legend in fig.legends:
        texts += [t.get_text() for t in legend.get_texts()]
    return "\n".join(texts)


def axis_labels(fig) -> list[str]:
    """The non-empty x and y labels of every axes, secondary axes included."""
    labels = []
    for ax in fig.axes:
        for child in [ax, *getattr(ax, "child_axes", [])]:
            labels += [s for s in (child.get_xlabel(), child.get_ylabel()) if s]
    return labels


def renderer_of(fig):
    """A drawn figure's renderer (an Agg canvas is attached if the figure has none)."""
    if not hasattr(fig.canvas, "get_renderer"):
        from matplotlib.backends.backend_agg import FigureCanvasAgg

        FigureCanvasAgg(fig)
    fig.canvas.draw()
    return fig.canvas.get_renderer()


@contextlib.contextmanager
def figures_saved():
    """Collect every figure that ``Figure.savefig`` writes while the block runs.

    The commands build their figures inside and only save them; this keeps the
    figure a command really wrote, to be read back (the file is still written).
    """
    import pytest
    from matplotlib.figure import Figure

    saved = []
    original = Figure.savefig

    def savefig(self, *args, **kwargs):
        saved.append(self)
        return original(self, *args, **kwargs)

    with pytest.MonkeyPatch.context() as mp:
        mp.setattr(Figure, "savefig", savefig)
        yield saved
