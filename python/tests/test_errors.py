"""Bad input: a bad profile raises ProfileError (a ValueError) with the command line's message
naming the file, the line, the key and what is expected; bad arguments raise ValueError or
TypeError naming the argument; nothing is written by a refused run; no panic reaches Python
(PyO3 would raise pyo3_runtime.PanicException, a BaseException, which these tests would not
catch as an Exception)."""

import numpy as np
import pytest

import noisewright
from conftest import MIC

BAD_DENSITY = """# Invented demo: a floor whose density has no unit of density.
sample_rate = "48 kHz"
[band]
low = "10 Hz"
high = "20 kHz"
[[floor]]
density = "4 nV"
"""


def test_a_bad_profile_raises_profile_error_with_the_clis_message(cli, tmp_path):
    path = tmp_path / "bad.toml"
    path.write_text(BAD_DENSITY)
    p = cli("budget", path, code=2)
    cli_message = p.stderr.decode().strip().removeprefix("noisewright: error: ")
    with pytest.raises(noisewright.ProfileError) as info:
        noisewright.Profile.from_path(path)
    e = info.value
    assert isinstance(e, ValueError)
    assert str(e) == cli_message
    assert e.key == "floor[0].density" and e.line == 7 and e.file == str(path)
    assert "floor[0].density" in str(e) and "expect" in str(e)  # what the key takes
    # From text, the label stands for the file; generate() with a path raises the same.
    with pytest.raises(noisewright.ProfileError, match=r"^inline:7: floor\[0\]\.density: "):
        noisewright.Profile.from_toml(BAD_DENSITY, label="inline")
    with pytest.raises(noisewright.ProfileError, match=r"floor\[0\]\.density"):
        noisewright.generate(path, 10)
    with pytest.raises(noisewright.ProfileError, match="unknown"):
        noisewright.Profile.from_toml(BAD_DENSITY.replace("[band]", "colour = 1\n[band]"))
    # A missing file is a profile error too, naming it (as the command line does).
    with pytest.raises(ValueError, match="nothing.toml"):
        noisewright.Profile.from_path(tmp_path / "nothing.toml")


@pytest.mark.parametrize("call, error, words", [
    (lambda: noisewright.generate(MIC, -1), ValueError, "argument samples"),
    (lambda: noisewright.generate(MIC, 2.5), TypeError, "argument samples"),
    (lambda: noisewright.generate(MIC, 10, seed=-3), ValueError, "argument seed"),
    (lambda: noisewright.generate(MIC, 10, seed=2**64), ValueError, "argument seed"),
    (lambda: noisewright.generate(MIC, 10, start="0"), TypeError, "argument start"),
    (lambda: noisewright.generate(42, 10), TypeError, "argument profile"),
    (lambda: noisewright.generate(MIC, 10, start=2**63), ValueError, "argument start"),
    (lambda: noisewright.Generator(MIC, start=2**64 - 1), ValueError, "last possible start"),
    (lambda: noisewright.Generator(MIC).fill(np.zeros(8, dtype=np.float32)), TypeError,
     "float64"),
    (lambda: noisewright.Generator(MIC).fill([0.0, 1.0]), TypeError, "float64"),
    (lambda: noisewright.Generator(MIC).fill(np.zeros((8, 2))), ValueError, "shape"),
    (lambda: noisewright.Generator(MIC).fill(np.zeros(16)[::2]), ValueError, "contiguous"),
    (lambda: noisewright.Generator(MIC).fill(np.zeros(8).view()), None, None),
    (lambda: noisewright.Generator(MIC).fill(readonly(np.zeros(8))), ValueError, "writeable"),
    (lambda: noisewright.Generator(MIC).density([0.0]), ValueError, "argument f"),
    (lambda: noisewright.Generator(MIC).density([1e9]), ValueError, "argument f"),
    (lambda: noisewright.Generator(MIC).density(["x"]), ValueError, None),
    (lambda: noisewright.analyze(np.zeros((10, 2)), 48e3), ValueError, "one channel"),
    (lambda: noisewright.analyze(np.zeros(1000), float("nan")), ValueError, None),
    (lambda: noisewright.analyze(np.zeros(1000), -1.0), ValueError, None),
    (lambda: noisewright.analyze([], 48e3), ValueError, None),
    (lambda: noisewright.analyze(np.full(1000, np.nan), 48e3, MIC), ValueError, None),
    (lambda: noisewright.budget(MIC, bands=["10Hz..1Hz"]), ValueError, "argument bands"),
    (lambda: noisewright.budget(MIC, bands=[(1.0, float("inf"))]), ValueError, "bands"),
    (lambda: noisewright.budget(MIC, order=99), ValueError, "argument order"),
    (lambda: noisewright.budget(MIC, bands="1Hz..10Hz"), TypeError, None),
])
def test_bad_arguments_raise_value_or_type_errors_naming_the_argument(call, error, words):
    if error is None:
        call()
        return
    with pytest.raises(error) as info:
        call()
    if words:
        assert words in str(info.value), str(info.value)


def readonly(a):
    a.flags.writeable = False
    return a


@pytest.mark.parametrize("options, words", [
    (dict(samples=10, seconds=1.0), "samples and seconds"),
    (dict(level_dbfs=-20.0, full_scale=1.0), "level_dbfs and full_scale"),
    (dict(sample_format="f13"), "argument sample_format"),
    (dict(seconds="soon"), "argument seconds"),
    (dict(level_dbfs=3.0), "argument level_dbfs"),
    (dict(samples=0), "argument samples"),
    (dict(full_scale="1 nV", samples=1000), "full scale"),  # clipping: nothing written
    (dict(full_scale="1 A"), "full_scale"),
])
def test_render_refuses_bad_settings_and_writes_nothing(tmp_path, options, words):
    out = tmp_path / "x.wav"
    with pytest.raises(ValueError) as info:
        noisewright.render(MIC, out, **options)
    assert words in str(info.value), str(info.value)
    assert list(tmp_path.iterdir()) == []


def test_render_makes_missing_folders_and_an_impossible_path_is_an_os_error(tmp_path):
    # As the command line: folders are made; a place no file can be is an OSError.
    manifest = noisewright.render(MIC, tmp_path / "a" / "b" / "x.wav", samples=100)
    assert manifest["samples"] == 100 and manifest["seed"] == 1
    assert (tmp_path / "a" / "b" / "x.wav.json").is_file()
    with pytest.raises(OSError, match="x.wav"):
        noisewright.render(MIC, "/proc/x.wav", samples=100)


def test_render_never_overwrites_its_profile(tmp_path):
    p = tmp_path / "p.toml"
    p.write_bytes(MIC.read_bytes())
    with pytest.raises(ValueError):
        noisewright.render(p, p, samples=100, sample_format="f64")
    assert p.read_bytes() == MIC.read_bytes()


def test_edge_sizes_work():
    assert noisewright.generate(MIC, 0).shape == (0,)
    g = noisewright.Generator(MIC, seed=5)
    g.fill(np.zeros(0))
    assert g.read(0).shape == (0,) and g.position == 0
    assert g.read(1).shape == (1,)
