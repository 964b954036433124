import pathlib
import re

import photpipe
from photpipe.flags import FLAGS, describe_flags, meaning, split_flags

SOURCE = pathlib.Path(photpipe.__file__).parent
# flags are set as flags.append("word"), _warn(flags, "word", ...) or _flag(flags, m, "word")
SET = re.compile(r'(?:flags\.append\(|_warn\(flags, |_flag\([a-z_]+, [a-z_]+, )"([a-z0-9_]+)"')


def test_every_flag_the_code_sets_is_registered():
    words = set()
    for path in SOURCE.rglob("*.py"):
        words |= set(SET.findall(path.read_text(encoding="utf-8")))
    assert len(words) > 20
    assert sorted(words - set(FLAGS)) == []


def test_meanings_and_splitting():
    assert split_flags("few_stars,,edge") == ["few_stars", "edge"]
    assert "upper limit" in meaning("upper_limit")
    assert describe_flags({"edge": 1}) == ["edge (1 row): " + meaning("edge")]


def test_the_readme_lists_every_flag_with_its_meaning():
    readme = (SOURCE.parent / "README.md").read_text(encoding="utf-8")
    for word, (stage, text) in FLAGS.items():
        assert f"| `{word}` | {stage} | {text} |" in readme
