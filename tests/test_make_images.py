"""docs/make_images.py draws every picture the README shows, so none can go stale."""
import importlib.util
import re
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]


def load_script():
    spec = importlib.util.spec_from_file_location("make_images", ROOT / "docs" / "make_images.py")
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


def test_script_makes_every_readme_picture():
    script = load_script()
    shown = set(re.findall(r"!\[[^\]]*\]\(docs/img/([^)]+)\)", (ROOT / "README.md").read_text(encoding="utf-8")))
    assert shown == set(script.FROM_DROP) | set(script.FROM_QUICK) | set(script.FROM_SCRIPTS)
    assert shown == {p.name for p in (ROOT / "docs" / "img").glob("*.png")}
    # the drop it draws is the README's own example, option for option
    readme = (ROOT / "README.md").read_text(encoding="utf-8")
    example = re.search(r"hopscape (drop --shape.*?) --out", readme.replace("\\\n", " "), re.S).group(1)
    assert example.split() == script.DROP
