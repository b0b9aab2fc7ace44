"""The package against the command line: the same samples bit for bit, the same files byte
for byte, the same JSON objects, in one thread or several."""

import json
import threading

import numpy as np
import pytest

import noisewright
from conftest import MIC, PROFILES

# Invented demo scenario: three correlated channels of a white floor (as tests/cli_channels.rs).
MULTI = """# Invented demo: three sensor channels sharing half their noise.
sample_rate = "8 kHz"
channels = 3
correlation = 0.5
[band]
low = "10 Hz"
high = "3 kHz"
[[floor]]
density = "10 nV/rtHz"
"""


def cli_raw_f64(cli, profile_path, samples, seed, start, tmp_path):
    out = tmp_path / f"cli-{seed}-{start}.f64"
    cli("generate", profile_path, "--samples", samples, "--seed", seed,
        "--start-sample", start, "--format", "raw", "--sample-format", "f64", "-o", out)
    return np.fromfile(out, dtype="<f8")


def assert_bits_equal(a, b, what):
    assert a.dtype == np.float64 and b.dtype == np.float64, what
    assert a.shape == b.shape, f"{what}: shape {a.shape} vs {b.shape}"
    same = a.view(np.uint64) == b.view(np.uint64)
    if not same.all():
        i = int(np.argmin(same.ravel()))
        raise AssertionError(f"{what}: {np.count_nonzero(~same)} values differ, first at "
                             f"flat index {i}: {a.ravel()[i]!r} vs {b.ravel()[i]!r}")


@pytest.mark.parametrize("path", PROFILES, ids=[p.stem for p in PROFILES])
def test_generate_equals_cli_raw_f64_for_every_bundled_profile(cli, tmp_path, path):
    seed, start, n = 11, 5000, 30_000
    want = cli_raw_f64(cli, path, n, seed, start, tmp_path)
    got = noisewright.generate(noisewright.Profile.from_path(path), n, seed=seed, start=start)
    assert got.shape == (n,)
    assert_bits_equal(got, want, f"{path.name} seed {seed} start {start}")


def test_generate_equals_cli_raw_f64_with_three_channels(cli, tmp_path):
    path = tmp_path / "multi.toml"
    path.write_text(MULTI)
    seed, start, n = 7, 1234, 20_000
    want = cli_raw_f64(cli, path, n, seed, start, tmp_path).reshape(n, 3)
    got = noisewright.generate(str(path), n, seed=seed, start=start)
    assert got.shape == (n, 3) and got.flags["C_CONTIGUOUS"]
    assert_bits_equal(got, want, f"three channels seed {seed} start {start}")
    # From text, the same profile gives the same samples.
    again = noisewright.generate(noisewright.Profile.from_toml(MULTI), n, seed=seed, start=start)
    assert_bits_equal(again, want, "three channels from TOML text")


@pytest.mark.parametrize("text", [None, MULTI], ids=["mono", "three-channels"])
def test_fill_into_a_preallocated_array_continues_the_stream_exactly(text):
    profile = (noisewright.Profile.from_path(PROFILES[0]) if text is None
               else noisewright.Profile.from_toml(text))
    seed, n = 3, 50_000
    whole = noisewright.generate(profile, n, seed=seed)
    g = noisewright.Generator(profile, seed=seed)
    c = profile.channels
    shape = (lambda k: (k,)) if c == 1 else (lambda k: (k, c))
    # Uneven blocks through one buffer, then read(), must tile the one-shot array.
    buf = np.empty(shape(4097))
    address = buf.ctypes.data
    pieces, done = [], 0
    for k in [4097, 1, 4097, 333, 4097]:
        view = buf[:k]
        g.fill(view)
        pieces.append(view.copy())
        done += k
        assert g.position == done
    assert buf.ctypes.data == address  # filled in place
    pieces.append(g.read(n - done))
    assert_bits_equal(np.concatenate(pieces), whole, f"fill/read in blocks, seed {seed}")
    # A generator started later continues the same run.
    later = noisewright.Generator(profile, seed=seed, start=10_000).read(n - 10_000)
    assert_bits_equal(later, whole[10_000:], "Generator(start=10000)")


def test_fill_allocates_no_array_per_call():
    import tracemalloc

    g = noisewright.Generator(PROFILES[0], seed=2)
    buf = np.empty(1 << 18)  # 2 MiB
    g.fill(buf)  # the engine's own buffers are made on the first call
    tracemalloc.start()
    try:
        for _ in range(8):
            g.fill(buf)
        _, peak = tracemalloc.get_traced_memory()
    finally:
        tracemalloc.stop()
    # numpy reports its array buffers to tracemalloc; a copy would show as 2 MiB.
    assert peak < 64 * 1024, f"fill traced {peak} bytes of Python/numpy allocations"


@pytest.mark.parametrize("name, options", [
    ("noise.wav", dict(level_dbfs=-20.0)),
    ("noise.wav", dict(level_dbfs="-26 dBFS", sample_format="i24", start=480)),
    ("noise.f64", dict(sample_format="f64")),
    ("noise.npy", dict(full_scale="10uV", sample_format="i16", seconds=0.25)),
    ("noise.csv", dict(seconds="20 ms")),
])
def test_render_writes_the_clis_bytes_and_returns_its_manifest(cli, tmp_path, name, options):
    profile = MIC
    flags = {"level_dbfs": "--level", "full_scale": "--full-scale",
             "sample_format": "--sample-format", "seconds": "--duration",
             "start": "--start-sample"}
    args = ["generate", profile, "--seed", 9, "-o", tmp_path / "cli" / name]
    for key, value in options.items():
        text = f"{value}dBFS" if key == "level_dbfs" and not isinstance(value, str) else value
        text = f"{text} s" if key == "seconds" and not isinstance(value, str) else text
        args += [flags[key], text]
    if "seconds" not in options:
        args += ["--samples", 24_000]
        options = dict(options, samples=24_000)
    (tmp_path / "cli").mkdir()
    (tmp_path / "py").mkdir()
    cli(*args)
    manifest = noisewright.render(str(profile), tmp_path / "py" / name, seed=9, **options)
    for f in [name, name + ".json"]:
        a = (tmp_path / "cli" / f).read_bytes()
        b = (tmp_path / "py" / f).read_bytes()
        assert a == b, f"{f} differs ({options})"
    assert manifest == json.loads((tmp_path / "py" / (name + ".json")).read_text())


def test_budget_is_the_object_budget_json_prints(cli):
    for path in PROFILES[:3]:
        want = json.loads(cli("budget", path, "--json").stdout)
        assert noisewright.budget(path) == want, path.name
    path = PROFILES[0]
    want = json.loads(cli("budget", path, "--json", "--band", "0.1Hz..10Hz",
                          "--band", "100 Hz..1 kHz", "--order", "0").stdout)
    got = noisewright.budget(noisewright.Profile.from_path(path),
                             bands=[(0.1, 10.0), "100 Hz..1 kHz"], order=0)
    assert got == want


def test_analyze_is_the_object_analyze_json_prints(cli, tmp_path):
    profile = MIC
    out = tmp_path / "x.f64"
    cli("generate", profile, "--samples", 96_000, "--seed", 5, "--format", "raw",
        "--sample-format", "f64", "-o", out)
    want = json.loads(cli("analyze", out, "--profile", profile, "--json").stdout)
    got = noisewright.analyze(np.fromfile(out, dtype="<f8"),
                              noisewright.Profile.from_path(profile).sample_rate, profile)
    assert set(got) == set(want)
    # Only the description of the input differs: a file with its manifest, or memory.
    assert got["file"]["format"] == "memory" and want["file"]["format"] == "raw"
    for key in set(want) - {"file"}:
        assert got[key] == want[key], key


def test_two_threads_at_once_give_the_arrays_of_one():
    multi = noisewright.Profile.from_toml(MULTI)
    jobs = [(PROFILES[0], 1, 300_000), (multi, 2, 200_000), (PROFILES[-1], 3, 300_000),
            (multi, 4, 100_000)]
    alone = [noisewright.generate(p, n, seed=s) for p, s, n in jobs]
    together = [None] * len(jobs)
    errors = []
    start = threading.Barrier(len(jobs))

    def work(i):
        try:
            p, s, n = jobs[i]
            start.wait()
            together[i] = noisewright.generate(p, n, seed=s)
        except Exception as e:  # reported below with its job
            errors.append((i, e))

    threads = [threading.Thread(target=work, args=(i,)) for i in range(len(jobs))]
    for t in threads:
        t.start()
    for t in threads:
        t.join()
    assert not errors, errors
    for i, (a, b) in enumerate(zip(alone, together)):
        assert_bits_equal(b, a, f"job {i} (seed {jobs[i][1]}) in a thread")
    # One Generator shared by threads: the calls take turns and the blocks tile the run.
    g = noisewright.Generator(PROFILES[0], seed=1)
    blocks = {}

    def pull(i):
        blocks[i] = (g.read(10_000))

    threads = [threading.Thread(target=pull, args=(i,)) for i in range(4)]
    for t in threads:
        t.start()
    for t in threads:
        t.join()
    assert g.position == 40_000
    whole = alone[0][:40_000].reshape(4, 10_000)
    got = {bytes(b.view(np.uint64)) for b in blocks.values()}
    assert got == {bytes(r.view(np.uint64)) for r in whole}
