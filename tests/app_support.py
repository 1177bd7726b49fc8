"""Shared helpers for the app tests without a browser: render a session to a Bokeh document."""
from __future__ import annotations

import pytest
from bokeh.document import Document

from app.explorer import Explorer


def render(explorer: Explorer) -> Document:
    doc = Document()
    doc.add_root(explorer.__panel__().get_root(doc))
    return doc


@pytest.fixture
def app():
    explorer = Explorer()
    explorer.doc = render(explorer)
    return explorer
