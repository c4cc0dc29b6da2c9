"""Responsiveness of the web page (ui/app.py): compute per rerun, in milliseconds.

Not a test. Run from the repository root::

    python benchmarks/bench_ui.py [--repeat N]

Prints medians of:

* the bare pieces a changed scenario costs: ``rheology.analyse`` of the demo and the
  page's envelope chart (``ui.chart.envelope_spec``: the small tables and the Vega-Lite
  specification the browser draws), alone and with a second regime beside it; for
  comparison, the matplotlib figure drawn to PNG (``strength_figure`` + ``savefig``) at
  screen resolution (what the page used to send) and at the download resolution (made
  only when the PNG is downloaded);
* AppTest reruns of the whole page (streamlit.testing, script compute plus the test
  harness's few milliseconds) after a widget change:

  - the strain-rate slider moved to a value not seen before (new analysis and chart),
  - the slider moved back to a value already seen (everything from the caches),
  - a widget that does not change the column (the depth of the point question).

The page's aim is at most 250 ms of compute for a rerun after a strain-rate change.
The time the browser takes to draw the chart is not included (it runs on the
visitor's machine, after the server has answered).
"""

from __future__ import annotations

import argparse
import statistics
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
if str(ROOT) not in sys.path:
    sys.path.insert(0, str(ROOT))

APP = ROOT / "ui" / "app.py"


def _median_ms(function, repeat: int, warm: int = 1) -> float:
    for _ in range(warm):
        function()
    times = []
    for _ in range(repeat):
        start = time.perf_counter()
        function()
        times.append((time.perf_counter() - start) * 1e3)
    return statistics.median(times)


def bare_pieces(repeat: int) -> dict[str, float]:
    """Median times [ms] of analyse, the page chart and the matplotlib figures."""
    import rheology
    from rheology.scenario import bundled_example, load_scenario
    from ui import chart, views

    scenario = load_scenario(bundled_example("demo"))
    analysis = rheology.analyse(scenario)
    companion = rheology.analyse(scenario, faulting="normal")
    few = max(3, repeat // 2)
    return {
        "analyse (demo)": _median_ms(lambda: rheology.analyse(scenario), repeat),
        "page chart (envelope_spec)": _median_ms(lambda: chart.envelope_spec(analysis), repeat),
        "page chart with a second regime": _median_ms(
            lambda: chart.envelope_spec(analysis, companion), repeat
        ),
        "matplotlib PNG at 100 dpi (former page figure)": _median_ms(
            lambda: views.figure_png(analysis, dpi=100), few
        ),
        "download figure (figure_png, 150 dpi)": _median_ms(
            lambda: views.figure_png(analysis), few
        ),
    }


def page_reruns(repeat: int) -> dict[str, float]:
    """Median AppTest rerun times [ms] after three kinds of widget change."""
    from streamlit.testing.v1 import AppTest

    at = AppTest.from_file(str(APP), default_timeout=120).run()
    if at.exception:
        raise SystemExit(f"the page raised: {at.exception}")
    slider = "w_log_rate"
    fresh_values = [round(-14.0 - 0.1 * i, 1) for i in range(repeat)]
    times = {
        "strain rate moved to a new value": [],
        "strain rate moved to a value seen before": [],
        "point-question depth changed (column unchanged)": [],
    }

    def timed(label, action):
        start = time.perf_counter()
        action().run()
        times[label].append((time.perf_counter() - start) * 1e3)
        if at.exception:
            raise SystemExit(f"the page raised: {at.exception}")

    for value in fresh_values:
        timed(
            "strain rate moved to a new value",
            lambda v=value: at.select_slider(key=slider).set_value(v),
        )
    for value in fresh_values:
        timed(
            "strain rate moved to a value seen before",
            lambda v=value: at.select_slider(key=slider).set_value(v),
        )
    at.session_state["view_tab"] = "Ask about one depth"  # only the open tab is drawn
    at.run()
    for index in range(repeat):
        timed(
            "point-question depth changed (column unchanged)",
            lambda i=index: at.number_input(key="w_probe_depth_km").set_value(5.0 + i),
        )
    return {label: statistics.median(values) for label, values in times.items()}


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeat", type=int, default=9, help="runs per measurement (default 9)")
    args = parser.parse_args(argv)
    print("Page responsiveness, medians [ms]")
    for label, value in bare_pieces(args.repeat).items():
        print(f"  {label:<64} {value:8.1f}")
    for label, value in page_reruns(args.repeat).items():
        print(f"  {'AppTest rerun, ' + label:<64} {value:8.1f}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
