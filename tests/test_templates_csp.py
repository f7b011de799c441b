"""The Content-Security-Policy refuses inline script (W3C CSP Level 3, script-src without
'unsafe-inline'): no template may carry an inline event handler or a javascript: URL, which
the browser would block silently. Behaviour goes in static/js through data- attributes."""

from __future__ import annotations

import re
from pathlib import Path

TEMPLATES = Path(__file__).resolve().parent.parent / "templates"
INLINE = re.compile(r"""\son[a-z]+\s*=\s*["']|javascript:""", re.IGNORECASE)


def test_no_template_has_an_inline_handler() -> None:
    found = [
        f"{path.relative_to(TEMPLATES)}:{number}: {line.strip()[:80]}"
        for path in sorted(TEMPLATES.rglob("*.html"))
        for number, line in enumerate(path.read_text().splitlines(), 1)
        if INLINE.search(line)
    ]
    assert not found, "inline handlers the CSP would block:\n" + "\n".join(found)


def test_the_check_finds_a_planted_handler() -> None:
    assert INLINE.search('<select name="site" onchange="this.form.submit()">')
    assert not INLINE.search('<select name="site" data-autosubmit>')
