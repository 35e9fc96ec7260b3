"""The one way qhat draws and writes figures.

Every figure is a :class:`matplotlib.figure.Figure` made without pyplot, so a user's
backend and open windows are never touched. Figures are built inside
:func:`plain_text` (titles and labels carry user text: a ``$`` must not start
matplotlib's maths parser, which reads ``text.parse_math`` when a text is created).
Each PNG is written to a temporary name in its folder and renamed into place with the
mode a new file gets under the user's umask, so an interrupted run leaves no half
PNG and a report is as readable as any other file the user makes.
"""

from __future__ import annotations

import contextlib
import os
import tempfile
from collections.abc import Callable, Iterator, Mapping
from pathlib import Path

__all__ = ["plain_text", "new_figure", "save_figure", "save_figures"]


@contextlib.contextmanager
def plain_text() -> Iterator[None]:
    """Context in which new texts are drawn literally (no ``$...$`` maths)."""
    import matplotlib

    with matplotlib.rc_context({"text.parse_math": False}):
        yield


def new_figure(**options):
    """A pyplot-free :class:`matplotlib.figure.Figure` (``options`` as for Figure)."""
    from matplotlib.figure import Figure

    return Figure(**options)


def _file_mode() -> int:
    umask = os.umask(0)
    os.umask(umask)
    return 0o666 & ~umask


def save_figure(figure, path: str | os.PathLike, *, dpi: int, **savefig_options) -> Path:
    """Write ``figure`` as a PNG at ``path`` atomically, with the umask's file mode.

    Parameters
    ----------
    figure : matplotlib.figure.Figure
        The figure to write.
    path : str or os.PathLike
        Destination; its folder must exist.
    dpi : int
        Resolution.
    **savefig_options
        Passed on to :meth:`~matplotlib.figure.Figure.savefig`.

    Returns
    -------
    pathlib.Path
        The path written.
    """
    path = Path(path)
    handle, temporary = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".png",
                                         dir=path.parent)
    os.close(handle)
    try:
        figure.savefig(temporary, dpi=dpi, format="png", **savefig_options)
        os.chmod(temporary, _file_mode())
        os.replace(temporary, path)
    finally:
        if os.path.exists(temporary):
            os.unlink(temporary)
    return path


def save_figures(build: Callable[[], Mapping[str, object]], folder: str | os.PathLike, *,
                 dpi: int, **savefig_options) -> dict[str, str]:
    """Build figures with :func:`plain_text` in force and write each into ``folder``.

    Parameters
    ----------
    build : callable
        Returns ``{file name: Figure}``; called inside :func:`plain_text`.
    folder : str or os.PathLike
        An existing folder.
    dpi : int
        Resolution of every PNG.
    **savefig_options
        Passed on to :meth:`~matplotlib.figure.Figure.savefig`.

    Returns
    -------
    dict of str to str
        File name -> file name, for the figures written, in build order.
    """
    folder = Path(folder)
    written = {}
    with plain_text():
        for name, figure in build().items():
            save_figure(figure, folder / name, dpi=dpi, **savefig_options)
            written[name] = name
    return written
