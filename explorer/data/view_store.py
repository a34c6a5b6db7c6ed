"""The view store of a workspace: saved views as plain text files in ``root/views``, each
replaced atomically, under names made safe by :func:`explorer.data.naming.safe_name`."""

from __future__ import annotations

import os
from pathlib import Path

from explorer.data.atomic import write_text_atomic
from explorer.data.model import fail
from explorer.data.naming import safe_name

__all__ = ["ViewStore"]

_VIEW_SUFFIX = ".json"
_MAX_VIEW_BYTES = 1_000_000


class ViewStore:
    """Saved views in one folder.

    Parameters
    ----------
    views_dir : Path
        The folder (already created).
    """

    def __init__(self, views_dir: Path) -> None:
        self.views_dir = views_dir

    def _view_path(self, name: str) -> Path:
        path = self.views_dir / (safe_name(name, what="view name") + _VIEW_SUFFIX)
        # safe_name leaves no separators; this guards the invariant itself.
        if path.parent != self.views_dir:
            raise fail(f"The view name {name!r} cannot be used.", "Choose a plain name.")
        return path

    def save_view(self, name: str, text: str) -> Path:
        """Save a view's text (``ViewState.to_json()``) under a name; replace atomically.

        Parameters
        ----------
        name : str
            The user's name for the view; made safe with :func:`safe_name`.
        text : str
            The view file's content.

        Returns
        -------
        Path
            Where the view was saved, always inside ``views/``.
        """
        if not isinstance(text, str):
            raise fail("A view must be text.", "Save ViewState.to_json().")
        if len(text.encode("utf-8", "surrogatepass")) > _MAX_VIEW_BYTES:
            raise fail(
                f"The view is larger than {_MAX_VIEW_BYTES // 1000} kB.",
                "Select fewer districts or filters.",
            )
        path = self._view_path(name)
        try:
            write_text_atomic(path, text)
        except (OSError, UnicodeEncodeError) as exc:
            raise fail(f"Cannot save the view {name!r}: {exc}.") from None
        return path

    def load_view(self, name: str) -> str:
        """The text of a saved view.

        Raises
        ------
        DataError
            If no view has that name.
        """
        path = self._view_path(name)
        try:
            with open(path, encoding="utf-8", newline="") as handle:  # keep "\r" as saved
                return handle.read()
        except FileNotFoundError:
            raise fail(
                f"There is no saved view called {name!r}.", "Pick one of the saved views."
            ) from None
        except (OSError, UnicodeDecodeError) as exc:
            raise fail(f"The view {name!r} cannot be read: {exc}.", file=path.name) from None

    def list_views(self) -> list[str]:
        """Names of the saved views (as stored, i.e. after :func:`safe_name`), sorted."""
        try:
            names = os.listdir(self.views_dir)
        except OSError:
            return []
        return sorted(
            n[: -len(_VIEW_SUFFIX)]
            for n in names
            if n.endswith(_VIEW_SUFFIX) and not n.startswith(".")
        )
