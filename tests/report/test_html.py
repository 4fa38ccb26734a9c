"""report.html: self-contained, every text escaped, every section and assumption present."""

from __future__ import annotations

import base64
import re

from fleetfuel.report import plots
from fleetfuel.report.html import report_html
from fleetfuel.report.outputs import figures
from fleetfuel.report.view import report_view

PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"  # PNG specification (ISO/IEC 15948)


def _page(result) -> str:
    view = report_view(result)
    return report_html(view, {k: plots.png_bytes(f) for k, f in figures(view).items()})


def test_page_is_self_contained(result) -> None:
    page = _page(result)
    assert "<script" not in page.lower()
    assert not re.search(r"(src|href)\s*=\s*[\"']?(https?:|//)", page, flags=re.IGNORECASE)
    assert "url(" not in page
    images = re.findall(r'<img src="data:image/png;base64,([A-Za-z0-9+/=]+)"', page)
    assert len(images) == 7  # ranking, route fuel, route electricity, duty mix, fuel map, two cycles
    assert all(base64.b64decode(b).startswith(PNG_SIGNATURE) for b in images)


def test_data_text_is_escaped(result) -> None:
    page = _page(result)
    assert "&lt;script&gt;alert(1)&lt;/script&gt; depot" in page
    assert "&lt;b&gt;no times&lt;/b&gt;" in page  # a file's error from the data-quality account


def test_sections_assumptions_and_cautions(result) -> None:
    page = _page(result)
    for heading in ("The question", "The answer", "Per route", "Duty-type mix", "Feasibility notes",
                    "Data quality", "Assumptions", "Cautions"):
        assert heading in page
    for key in result.assumptions:
        assert key in page
    for caution in ("estimates", "not\nguarantees", "legal masses", "gradeability", "braking", "range reserves",
                    "licensed practice"):
        assert caution in page
    # the answer names rank 1 of each class; the feasibility note gives the reason
    assert "<strong>van_diesel</strong>" in page and "<strong>truck_diesel</strong>" in page
    assert "@worst shift needs 95 kWh" in page
    assert "files: 2, usable files: 1, failed files: 1" in page
    # the report says which figure the ranking used
    assert "Ranking figure used: tco_per_year" in page
