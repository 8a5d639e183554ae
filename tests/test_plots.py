"""Plots: the drawn series equal the report's numbers; PNGs decode, are 900 px wide and
byte-identical for the same input; missing data raises ValueError naming the key.

Following the house rule, plots are tested on the data they draw, not on pixels. The
reference values below are derived in the tests: the exact Haar fidelity law
P(F) = (N-1)(1-F)^(N-2) (Zyczkowski & Sommers, J. Phys. A 34, 7111, 2001) integrated
over equal bins, and the Haar Meyer-Wallach mean (2^n - 2)/(2^n + 1) (Brennen, Quantum
Inf. Comput. 3, 619, 2003).
"""

import ast
import copy
import io
import math
import struct
from pathlib import Path

import haarline
import haarline.plots.comparison
import haarline.plots.diagram
import haarline.plots.figures
import haarline.plots.scans
import matplotlib
import matplotlib.image
import numpy as np
import pytest
from haarline.plots import _data as _plotdata
from haarline.plots import _style as _plotstyle

PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"
PX_PER_METRE_150_DPI = round(150 / 0.0254)  # 5906, the pHYs value of a 150 dpi PNG


# ----------------------------------------------------------------------------- fixtures


@pytest.fixture(scope="module")
def circuit():
    return haarline.load_reference("ry-cz-ring")


@pytest.fixture(scope="module")
def program(circuit):
    return haarline.expand(circuit)


@pytest.fixture(scope="module")
def report(circuit):
    """Every metric, a qubit scan, a depth scan and a layer sweep, at small sample sizes."""
    options = haarline.AnalysisOptions(
        metrics=["expressibility", "entanglement", "trainability", "capacity"],
        pairs=300,
        bins=40,
        samples=120,
        grad_samples=12,
        scan=[2, 3, 4],
        depth_scan=[1, 2],
        layers_sweep=[1, 2],
        seed=5,
    )
    return haarline.analyze(circuit, options)


@pytest.fixture(scope="module")
def one_qubit_report():
    c = haarline.parse_circuit(
        {"name": "single", "qubits": 1, "layers": 2, "layer": [{"gate": "rx"}, {"gate": "rz"}]}
    )
    options = haarline.AnalysisOptions(pairs=200, bins=20, samples=50, layers_sweep=[1, 2])
    return haarline.analyze(c, options)


@pytest.fixture(scope="module")
def files(report, program):
    return haarline.plot_files(report, program)


def png_chunks(png):
    assert png[:8] == PNG_SIGNATURE
    chunks, i = [], 8
    while i < len(png):
        (length,) = struct.unpack(">I", png[i : i + 4])
        chunks.append((png[i + 4 : i + 8], png[i + 8 : i + 8 + length]))
        i += 12 + length
    return chunks


def decoded(png):
    return matplotlib.image.imread(io.BytesIO(png), format="png")


# ------------------------------------------------------------------------------- series


def test_fidelity_series_is_the_report_histogram(report):
    s = haarline.fidelity_series(report)
    expr = report["expressibility"]
    assert s["name"] == "ry-cz-ring"
    np.testing.assert_array_equal(s["circuit"], expr["histogram"])
    np.testing.assert_array_equal(s["haar"], expr["haar"])
    np.testing.assert_allclose(s["edges"], np.linspace(0, 1, 41))
    assert (s["kl"], s["interval"], s["bias"]) == (
        expr["kl"],
        tuple(expr["interval"]),
        expr["bias"],
    )
    assert s["pairs"] == 300 and s["bins"] == 40 and s["qubits"] == 4
    assert s["floor"] == pytest.approx(0.5 / 300)
    assert s["circuit"].sum() == pytest.approx(1.0)


@pytest.mark.parametrize("qubits", [1, 4])
def test_log_panel_follows_the_span_of_the_exact_haar_masses(report, one_qubit_report, qubits):
    # Haar bin masses from the CDF 1 - (1-F)^(N-1): the first bin holds 1 - (1-1/K)^(N-1),
    # the last (1/K)^(N-1); for one qubit (N = 2) every bin holds 1/K.
    r = report if qubits == 4 else one_qubit_report
    s = haarline.fidelity_series(r)
    n_dim, k = 2**qubits, s["bins"]
    first, last = 1 - (1 - 1 / k) ** (n_dim - 1), (1 / k) ** (n_dim - 1)
    assert s["haar"][0] == pytest.approx(first) and s["haar"][-1] == pytest.approx(last)
    assert s["log_panel"] == (math.log10(first / last) > haarline.plots.figures.LOG_PANEL_DECADES)
    assert s["log_panel"] == (qubits == 4)


def test_meyer_wallach_series_is_the_report_distribution(report):
    s = haarline.meyer_wallach_series(report)
    ent = report["entanglement"]
    np.testing.assert_array_equal(s["fractions"], ent["distribution"])
    np.testing.assert_allclose(s["edges"], np.linspace(0, 1, 21))
    assert s["mean"] == ent["meyer_wallach"] and s["interval"] == tuple(ent["interval"])
    assert s["samples"] == 120 and s["std"] == ent["std"]
    assert s["haar"] == pytest.approx((2**4 - 2) / (2**4 + 1))


def test_variance_series_is_the_report_scan_and_its_fits(report):
    s = haarline.variance_series(report)
    train = report["trainability"]
    for key, rows in (("points", train["points"]), ("layer_points", train["layer_points"])):
        np.testing.assert_array_equal(s[key]["qubits"], [p["qubits"] for p in rows])
        np.testing.assert_array_equal(s[key]["layers"], [p["layers"] for p in rows])
        np.testing.assert_array_equal(s[key]["variance"], [p["variance"] for p in rows])
        np.testing.assert_array_equal(s[key]["low"], [p["interval"][0] for p in rows])
        np.testing.assert_array_equal(s[key]["high"], [p["interval"][1] for p in rows])
    exp, power = s["fits"]["exponential"], s["fits"]["power"]
    n = exp["qubits"]
    assert n[0] == 2 and n[-1] == 4
    fe, fp = train["fit"]["exponential"], train["fit"]["power"]
    np.testing.assert_allclose(exp["variance"], np.exp(fe["intercept"]) * np.exp(fe["slope"] * n))
    np.testing.assert_allclose(power["variance"], np.exp(fp["intercept"]) * n ** fp["slope"])
    assert s["barren_plateau"] is train["barren_plateau"] and s["reason"] == train["reason"]
    assert s["cost"] == "global cost" and s["samples"] == 12


def test_variance_series_without_fit_or_layer_points(report):
    r = copy.deepcopy(report)
    r["trainability"]["fit"] = None
    r["trainability"]["layer_points"] = []
    s = haarline.variance_series(r)
    assert s["fits"] == {} and s["layer_points"]["qubits"].size == 0


def test_sweep_series_is_the_report_rows(report):
    s = haarline.sweep_series(report)
    rows = report["sweep"]
    np.testing.assert_array_equal(s["layers"], [1, 2])
    # the bias-corrected KL, the value that lies inside its interval
    np.testing.assert_array_equal(s["kl"]["value"], [r["kl_corrected"] for r in rows])
    np.testing.assert_array_equal(s["kl"]["low"], [r["kl_interval"][0] for r in rows])
    mw = s["meyer_wallach"]
    np.testing.assert_array_equal(mw["value"], [r["meyer_wallach"] for r in rows])
    np.testing.assert_array_equal(mw["high"], [r["meyer_wallach_interval"][1] for r in rows])
    assert mw["haar"] == pytest.approx(14 / 17)
    assert (s["pairs"], s["samples"], s["qubits"]) == (300, 120, 4)


def test_sweep_series_without_entanglement_uses_the_haar_formula(report):
    r = copy.deepcopy(report)
    r["entanglement"] = None
    for row in r["sweep"]:
        row.pop("kl"), row.pop("kl_interval")
    s = haarline.sweep_series(r)
    assert s["kl"] is None and s["meyer_wallach"]["haar"] == pytest.approx(14 / 17)


def test_comparison_series_labels_repeats_apart(report, one_qubit_report):
    other = copy.deepcopy(report)
    other["circuit"]["layers"] = 5
    entries = haarline.comparison_series([report, other, report, one_qubit_report])
    assert [e["label"] for e in entries] == [
        "ry-cz-ring (3 layers) #1",
        "ry-cz-ring (5 layers)",
        "ry-cz-ring (3 layers) #2",
        "single",
    ]
    first = entries[0]
    assert first["kl"] == report["expressibility"]["kl_corrected"]
    assert first["meyer_wallach_interval"] == tuple(report["entanglement"]["interval"])
    np.testing.assert_array_equal(
        first["variance"]["variance"], [p["variance"] for p in report["trainability"]["points"]]
    )
    assert entries[3]["variance"] is None and entries[3]["kl"] is not None


# The circuit diagram's layout is tested in tests/test_diagram.py.


# --------------------------------------------------------------------------------- PNGs


def test_plot_files_has_every_plot_the_report_supports(files):
    assert list(files) == [
        "fidelity.png",
        "entanglement.png",
        "trainability.png",
        "sweep.png",
        "circuit.png",
    ]


@pytest.mark.parametrize(
    "name", ["fidelity.png", "entanglement.png", "trainability.png", "sweep.png", "circuit.png"]
)
def test_each_png_decodes_at_900_px_and_150_dpi_without_metadata(files, name):
    png = files[name]
    image = decoded(png)
    height, width, _ = image.shape
    assert abs(width - 900) <= 3 and 300 <= height <= 1400
    chunks = png_chunks(png)
    assert [t for t, _ in chunks if t not in (b"IDAT",)] == [b"IHDR", b"pHYs", b"IEND"]
    phys = dict(chunks)[b"pHYs"]
    assert struct.unpack(">IIB", phys) == (PX_PER_METRE_150_DPI, PX_PER_METRE_150_DPI, 1)


@pytest.mark.parametrize(
    ("name", "draw"),
    [
        ("fidelity.png", haarline.fidelity_histogram_png),
        ("trainability.png", haarline.variance_scan_png),
    ],
)
def test_same_report_gives_the_same_bytes(files, report, name, draw):
    # a fresh copy of the report, in a fresh figure: the bytes depend on the data only
    # (the entanglement plot is checked the same way under changed rcParams below)
    assert draw(copy.deepcopy(report)) == files[name]


def test_same_program_gives_the_same_bytes(files, circuit):
    assert haarline.circuit_diagram_png(haarline.expand(circuit)) == files["circuit.png"]


def test_comparison_png_is_deterministic_and_decodes(report, one_qubit_report):
    first = haarline.comparison_png([report, one_qubit_report])
    assert haarline.comparison_png([report, one_qubit_report]) == first
    assert abs(decoded(first).shape[1] - 900) <= 3


def test_single_panel_fidelity_for_one_qubit(one_qubit_report):
    assert abs(decoded(haarline.fidelity_histogram_png(one_qubit_report)).shape[1] - 900) <= 3


def test_user_rc_settings_change_nothing_and_are_restored(files, report):
    with matplotlib.rc_context({"font.size": 19.0, "axes.facecolor": "#ff0000"}):
        png = haarline.meyer_wallach_png(report)
        assert matplotlib.rcParams["font.size"] == 19.0
    assert png == files["entanglement.png"]
    assert matplotlib.rcParams["font.size"] == matplotlib.rcParamsDefault["font.size"]


# ------------------------------------------------------------------------ missing data


def without(report, *path):
    r = copy.deepcopy(report)
    node = r
    for key in path[:-1]:
        node = node[key]
    node[path[-1]] = None
    return r


@pytest.mark.parametrize(
    ("draw", "path", "message"),
    [
        (haarline.fidelity_histogram_png, ("expressibility",), "'expressibility'"),
        (haarline.fidelity_series, ("expressibility", "haar"), "'expressibility.haar'"),
        (haarline.fidelity_series, ("circuit", "name"), "'circuit.name'"),
        (haarline.meyer_wallach_png, ("entanglement",), "'entanglement'"),
        (
            haarline.meyer_wallach_series,
            ("entanglement", "distribution"),
            "'entanglement.distribution'",
        ),
        (haarline.variance_scan_png, ("trainability",), "'trainability'"),
        (haarline.variance_series, ("trainability", "points"), "'trainability.points'"),
        (haarline.sweep_png, ("sweep",), "'sweep'"),
    ],
)
def test_missing_data_names_the_report_key(report, draw, path, message):
    with pytest.raises(ValueError, match=message):
        draw(without(report, *path))


def test_missing_metric_says_how_to_get_it(report):
    with pytest.raises(ValueError, match="analyze with the expressibility metric"):
        haarline.fidelity_series(without(report, "expressibility"))


def test_bad_data_is_described(report):
    r = copy.deepcopy(report)
    r["expressibility"]["haar"] = r["expressibility"]["haar"][:-1]
    with pytest.raises(ValueError, match="differ in length"):
        haarline.fidelity_series(r)
    r["expressibility"]["haar"] = ["a"]
    with pytest.raises(ValueError, match="'expressibility.haar': expected a list of numbers"):
        haarline.fidelity_series(r)
    r = copy.deepcopy(report)
    r["sweep"] = []
    with pytest.raises(ValueError, match="'sweep' is empty"):
        haarline.sweep_series(r)


def test_comparison_needs_something_to_compare(report):
    with pytest.raises(ValueError, match="at least one report"):
        haarline.comparison_series([])
    bare = copy.deepcopy(report)
    bare["expressibility"] = bare["trainability"] = None
    with pytest.raises(ValueError, match="nothing to compare"):
        haarline.comparison_png([bare])


def test_plot_files_skips_what_is_absent(report, program):
    bare = copy.deepcopy(report)
    for key in ("expressibility", "entanglement", "trainability", "sweep"):
        bare[key] = None
    assert haarline.plot_files(bare) == {}


def test_public_names_are_exported():
    for module in (_plotstyle, _plotdata):
        for name in module.__all__:
            assert hasattr(module, name)
    for module in (
        haarline.plots.figures,
        haarline.plots.scans,
        haarline.plots.comparison,
        haarline.plots.diagram,
    ):
        for name in module.__all__:
            if not name.isupper():
                assert name in haarline.__all__, name


@pytest.mark.parametrize(
    "module",
    [
        haarline.plots.figures,
        haarline.plots.scans,
        haarline.plots.comparison,
        haarline.plots.diagram,
        haarline.plots._style,
        haarline.plots._data,
    ],
)
def test_plot_modules_import_matplotlib_only_when_drawing(module):
    # `import analysis` must stay fast for the CLI: matplotlib is imported inside the
    # drawing functions (or for type checking only), never at module level
    tree = ast.parse(Path(module.__file__).read_text())
    for node in tree.body:
        names = []
        if isinstance(node, ast.Import):
            names = [a.name for a in node.names]
        elif isinstance(node, ast.ImportFrom):
            names = [node.module or ""]
        assert not any(n.split(".")[0] in ("matplotlib", "cycler") for n in names), names
