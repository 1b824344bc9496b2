"""The [[part]] tables parsed a batch at a time (massmodel.modelfile.partstream) and the loader built on it.

Oracle: tomli, the TOML parser the loader uses, parsing the whole text at once (an independent reading of the same
file: the cut must give exactly its tables, or hand the file back to it). The models built from a file read whole
(``build_model(read_source(...))``, which drops each table of its own copy) and from the batches must agree part by
part, bit for bit.
"""

from __future__ import annotations

import sys
from pathlib import Path

import numpy as np
import pytest
import tomli

from massmodel.modelfile.loader import ModelFileError, build_model, load_model, loads_model, read_source
from massmodel.modelfile.partstream import BATCH, PartText, split_part_tables
from massmodel.modelfile.reader import parse_toml

REPO = Path(__file__).resolve().parents[1]
DEMO = REPO / "parts_demo" / "brindlecombe_bl3.toml"
sys.path.insert(0, str(REPO / "benchmarks"))
from bench_load import generate  # noqa: E402  (the benchmark's generated assembly: groups, mirrors, patterns, cut-outs)

HEAD = """[model]
name = "cut test"
[units]
length = "mm"
"""


def part(k: int, extra: str = "") -> str:
    return (f'[[part]]\npath = "body/p{k}"\nshape = "box"\nsize = [10, 20, 30]\nmass = "{1 + k % 7} kg"\n'
            f'maturity = "estimated"\nat = [{k}, 0, 0]\n{extra}')


def whole(text: str) -> dict:
    return tomli.loads(text)


def assembled(text: str) -> dict:
    cut = split_part_tables(text, "t.toml")
    return cut.assembled() if isinstance(cut, PartText) else cut


@pytest.mark.parametrize("text", [
    # parts only, more than a batch
    HEAD + "".join(part(k) for k in range(BATCH * 2 + 5)),
    # sections before, between and after the parts; a table continued after the parts
    HEAD + '[vehicle]\nwheelbase = 2000\n' + part(0) + '[[group]]\npath = "body"\n' + part(1) + part(2)
    + '[[rule]]\nname = "r"\n[vehicle.extra]\nx = 1\n' + part(3),
    # sub-tables of a part, indented and spaced headers, comments, CRLF line ends
    HEAD + part(0, '[part.measured]\nmass = 2\ncg = [0, 0, 0]\n[[part.cut]]\nshape = "sphere"\n')
    + '  [[ part ]]   # spaced\npath = "body/q"\n' + part(1).replace("\n", "\r\n"),
    # header-like text inside values and a multi-line array whose rows look like tables
    HEAD + part(0, 'note = "[[part]]"\nrows = [\n[1],\n[2]\n]\n') + part(1),
])
def test_the_cut_gives_the_tables_of_the_whole_text(text: str) -> None:
    assert assembled(text) == whole(text)


@pytest.mark.parametrize("text", [
    HEAD + part(0) + '[part]\nx = 1\n',  # a [part] table: the whole text decides (here: not TOML)
    HEAD + part(0) + '[[group]]\npath = "g"\n[part.measured]\nmass = 1\n',  # a sub-table after another table
    HEAD + part(0) + '[["part"]]\npath = "q"\n',  # a quoted header of the same array
    HEAD + part(0) + 'note = """\n[[part]]\n"""\n' + part(1),  # a multi-line string holding a header line
])
def test_texts_the_cut_cannot_trust_are_parsed_whole(text: str) -> None:
    try:
        expected = whole(text)
    except tomli.TOMLDecodeError as exc:
        with pytest.raises(ModelFileError) as info:
            assembled(text)
        assert info.value.message == f"not valid TOML: {exc}"
    else:
        assert assembled(text) == expected


def test_a_syntax_error_in_a_late_part_is_the_whole_file_s_error(tmp_path: Path) -> None:
    text = HEAD + "".join(part(k) for k in range(BATCH + 40)) + '[[part]]\npath = "body/bad"\nmass = = 3\n'
    path = tmp_path / "m.toml"
    path.write_text(text, encoding="utf-8")
    with pytest.raises(ModelFileError) as expected:
        parse_toml(text, str(path))
    with pytest.raises(ModelFileError) as info:
        load_model(path)
    assert str(info.value) == str(expected.value)
    assert f"line {text.count(chr(10))}" in str(info.value)  # the line in the file, not in a batch


def test_a_syntax_error_is_reported_before_a_mistake_in_an_earlier_part(tmp_path: Path) -> None:
    # read whole, the file fails to parse before any part is looked at; the batches must give the same answer
    text = HEAD + part(0, 'colour = "purple"\n') + "".join(part(k) for k in range(1, BATCH + 3)) + "[[part]]\nx = \n"
    with pytest.raises(ModelFileError) as info:
        loads_model(text, label="m.toml")
    assert info.value.message.startswith("not valid TOML: ")


def test_a_mistake_beyond_the_first_batch_names_file_item_and_field(tmp_path: Path) -> None:
    late = BATCH + 17
    text = HEAD + "".join(part(k) for k in range(late)) + part(late).replace('mass = "', 'material = "unobtanium"\n#')
    path = tmp_path / "m.toml"
    path.write_text(text, encoding="utf-8")
    for load in (lambda: load_model(path), lambda: build_model(read_source(path))):
        with pytest.raises(ModelFileError) as info:
            load()
        assert (info.value.file, info.value.item, info.value.field) == (str(path), f"part 'body/p{late}'", "material")
        assert "unknown material 'unobtanium'" in info.value.message


@pytest.mark.parametrize("source", ["generated", "demo"])
def test_batches_and_whole_text_build_the_same_model(tmp_path: Path, source: str) -> None:
    if source == "demo":
        path = DEMO
    else:
        path = tmp_path / "generated.toml"
        path.write_text(generate(3 * BATCH), encoding="utf-8")
    assert isinstance(split_part_tables(path.read_text(encoding="utf-8"), str(path)), PartText)
    streamed = load_model(path)
    read = read_source(path)
    first = build_model(read)
    again = build_model(read)  # the read source is not consumed by a build (each build drops its own copy's tables)
    for other in (first, again):
        assert [c.path for c in other.components] == [c.path for c in streamed.components]
        assert [c.origin for c in other.components] == [c.origin for c in streamed.components]
        for a, b in zip(streamed.arrays(), other.arrays(), strict=True):
            np.testing.assert_array_equal(a, b)
        for a, b in zip(streamed.components, other.components, strict=True):
            np.testing.assert_array_equal(a.pose.linear, b.pose.linear)
            np.testing.assert_array_equal(a.pose.translation, b.pose.translation)


def test_a_model_that_extends_another_is_merged_whole(tmp_path: Path) -> None:
    (tmp_path / "base.toml").write_text(HEAD + part(0) + part(1), encoding="utf-8")
    child = tmp_path / "child.toml"
    child.write_text('[model]\nname = "child"\nextends = "base.toml"\nremove = ["body/p0"]\n[units]\nlength = "mm"\n'
                     + part(2), encoding="utf-8")
    assert [c.path for c in load_model(child).components] == ["body/p1", "body/p2"]
