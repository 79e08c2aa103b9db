"""qamsight figures bindings: the waterfall SVG is the CLI's, and valid XML."""
import xml.etree.ElementTree as ET

import qamsight as qs


def test_waterfall_equals_the_cli_svg(cli, tmp_path):
    svg = tmp_path / "w.svg"
    cli.run("sweep", "--mod", "16qam", "--esn0", "10,14", "--max-bits", "1e6", "--svg", svg, "--quiet")
    res = qs.sweep("16qam", es_n0_db=[10, 14], max_bits=1e6)
    assert res.waterfall_svg() == open(svg).read() == qs.waterfall_svg(res)
    root = ET.fromstring(res.waterfall_svg())
    assert root.tag.endswith("svg")
    assert "16-QAM" in res.waterfall_svg() and "My title" in res.waterfall_svg("My title")


def test_theory_figure_and_display_names():
    assert qs.modulation_display_name("16qam") == "16-QAM"
    assert qs.modulation_display_name("qpsk") == "QPSK"
    assert qs.modulation_display_name("8psk") == "8-PSK"
    svg = qs.theory_svg(["qpsk", "64qam"], [0, 2, 4, 6, 8, 10, 12])
    assert ET.fromstring(svg).tag.endswith("svg") and "64-QAM" in svg
