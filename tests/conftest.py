"""Shared helpers: build project-file text from element tuples."""

from __future__ import annotations

import pytest
from netlists import project_text


@pytest.fixture
def make_project():
    import calcdoc

    def make(elements, **kw):
        return calcdoc.loads(project_text(elements, **kw))

    return make
