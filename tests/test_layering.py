"""The stage order of docs/architecture.md, checked on the source.

Every module of the package is parsed with ast; each import of another
placer module must go to the same stage or a lower one, and no module
imports another module's private name (a leading underscore). Imports
under ``if TYPE_CHECKING:`` are for annotations only and never run, so
they are exempt from the order (not from the privacy rule). The one other
exemption is the notebook view: a result's ``_repr_html_``, ``_repr_svg_`` or
``plot`` method imports ``placer.report.notebook`` inside its body, on use
(DEVELOPERS.md, "The Python API").
"""

import ast
from pathlib import Path

import pytest

PACKAGE = Path(__file__).resolve().parent.parent / "placer"

#: Lowest first (DEVELOPERS.md, docs/architecture.md).
STAGES = ["ground", "circuit", "analysis", "target", "place", "evidence", "loops", "spec",
          "design", "compare", "report", "explore", "cli"]
GROUND = {"schema", "units", "eseries", "errors"}


def stage_of(module: str) -> int:
    """The rank of a dotted module name under placer (``placer.place.snap`` -> place)."""
    parts = module.split(".")[1:]
    if not parts:
        return -1          # the package itself (its lazy re-exports, __version__)
    head = parts[0]
    if head in GROUND:
        return STAGES.index("ground")
    if head in STAGES:
        return STAGES.index(head)
    raise AssertionError(f"module {module} is in no stage; add it to the table")


def modules():
    for path in sorted(PACKAGE.rglob("*.py")):
        relative = path.relative_to(PACKAGE.parent).with_suffix("")
        parts = list(relative.parts)
        is_package = parts[-1] == "__init__"
        if is_package:
            parts = parts[:-1]
        yield path, ".".join(parts), is_package


def type_checking_lines(tree):
    lines = set()
    for node in ast.walk(tree):
        if isinstance(node, ast.If) and "TYPE_CHECKING" in ast.unparse(node.test):
            for child in node.body:
                lines.update(range(child.lineno, child.end_lineno + 1))
    return lines


#: Methods whose body may import the notebook views from report/.
NOTEBOOK_METHODS = {"_repr_html_", "_repr_svg_", "plot"}
NOTEBOOK_MODULE = "placer.report.notebook"


def notebook_lines(tree):
    lines = set()
    for node in ast.walk(tree):
        if isinstance(node, ast.FunctionDef) and node.name in NOTEBOOK_METHODS:
            lines.update(range(node.lineno, node.end_lineno + 1))
    return lines


def imports(path, name, is_package):
    """(line, imported module, names, annotations only) of every placer import in a file."""
    tree = ast.parse(path.read_text(), filename=str(path))
    typing_only = type_checking_lines(tree)
    notebook = notebook_lines(tree)
    package = name if is_package else name.rsplit(".", 1)[0]
    for node in ast.walk(tree):
        if isinstance(node, ast.ImportFrom):
            if node.level:
                base = package.split(".")
                base = base[: len(base) - (node.level - 1)]
                target = ".".join(base + ([node.module] if node.module else []))
            else:
                target = node.module or ""
            if target == "placer" or target.startswith("placer."):
                exempt = node.lineno in typing_only or (
                    node.lineno in notebook and target == NOTEBOOK_MODULE)
                yield node.lineno, target, [a.name for a in node.names], exempt
        elif isinstance(node, ast.Import):
            for alias in node.names:
                if alias.name.startswith("placer"):
                    yield node.lineno, alias.name, [], node.lineno in typing_only


ALL = list(modules())


def test_the_table_covers_every_module():
    # a negative control: the parse finds the package's modules and each has a stage
    assert len(ALL) > 60
    for _, name, _ in ALL:
        if name != "placer":
            stage_of(name)
    assert stage_of("placer.report.data") > stage_of("placer.place.solve") > stage_of("placer.schema")


@pytest.mark.parametrize("path, name, is_package", ALL, ids=[n for _, n, _ in ALL])
def test_no_import_goes_up_and_none_is_private(path, name, is_package):
    own = stage_of(name) if name != "placer" else len(STAGES)
    problems = []
    for line, target, names, typing_only in imports(path, name, is_package):
        # `from .pkg import module` names a module: rank that one
        for imported in names or [None]:
            full = target
            if imported and (PACKAGE.parent / Path(*f"{target}.{imported}".split("."))).with_suffix(".py").exists():
                full = f"{target}.{imported}"
            if not typing_only and name != "placer" and stage_of(full) > own:
                problems.append(f"{path.name}:{line} imports {full} from a higher stage")
            if imported and imported.startswith("_") and not imported.startswith("__"):
                problems.append(f"{path.name}:{line} imports the private name {imported} from {target}")
    assert not problems, "\n".join(problems)


def test_the_check_catches_an_upward_and_a_private_import(tmp_path):
    # the checker itself, on a made-up module of the place stage
    fake = tmp_path / "fake.py"
    fake.write_text("from ..report.data import section_figures\nfrom .solve import _floats\n")
    found = list(imports(fake, "placer.place.fake", False))
    assert [(t, n) for _, t, n, _ in found] == [("placer.report.data", ["section_figures"]),
                                               ("placer.place.solve", ["_floats"])]
    assert stage_of(found[0][1]) > stage_of("placer.place.fake")


def test_only_the_notebook_view_is_exempt_in_a_plot_method(tmp_path):
    fake = tmp_path / "fake.py"
    fake.write_text("class R:\n"
                    "    def plot(self):\n"
                    "        from ..report.notebook import design_figure\n"
                    "        from ..report.data import section_figures\n")
    found = {t: exempt for _, t, _, exempt in imports(fake, "placer.place.fake", False)}
    assert found == {"placer.report.notebook": True, "placer.report.data": False}
