"""``snrkit presets``: the shipped presets."""

from ._common import print_json

__all__ = ["add_parser", "run", "collect_presets", "preset_file"]


def add_parser(p):
    p.add_argument("--json", action="store_true", help="print one JSON object")
    p.add_argument("--show", metavar="NAME",
                   help="print one preset's file (scenario, mode or demo system) and its path, "
                        "to copy and edit")


def collect_presets():
    """Presets by kind: ``{"scenarios": [...], "modes": [...], "demo_systems": [...]}``.

    Each entry is ``{"name": ..., "description": ...}``.  Kinds whose layer
    is not installed yet are empty lists.
    """
    from ..io.tomlfile import read_toml
    from .demo import demo_files
    out = {"scenarios": [], "modes": [], "demo_systems": []}
    for path in demo_files():
        out["demo_systems"].append({"name": path.stem,
                                    "description": read_toml(path, "demo system").get("title", "")})
    try:
        from ..atmosphere.scenarios import list_scenarios
    except ImportError:
        pass
    else:
        out["scenarios"] = list_scenarios()
    try:
        from ..photons.instruments import list_modes
    except ImportError:
        pass
    else:
        out["modes"] = list_modes()
    return out


def preset_file(name):
    """Path of the shipped preset file called ``name`` (scenario, mode or demo system)."""
    from ..errors import InputError
    from ..tables import data_path
    from .demo import demo_files
    import re
    if not re.fullmatch(r"[A-Za-z0-9][A-Za-z0-9._-]{0,100}", str(name)) or ".." in str(name):
        raise InputError("preset", name, "a preset name (letters, digits, '.', '_', '-')")
    candidates = [data_path("scenarios", f"{name}.toml"), data_path("instruments", f"{name}.toml")]
    candidates += [p for p in demo_files() if p.stem == name]
    for path in candidates:
        if path.is_file():
            return path
    names = [it["name"] for items in collect_presets().values() for it in items]
    raise InputError("preset", name, "one of " + ", ".join(names))


def run(args):
    if args.show:
        path = preset_file(args.show)
        print(f"# {path}")
        print(path.read_text(encoding="utf-8"), end="")
        return 0
    presets = collect_presets()
    if args.json:
        print_json(presets)
        return 0
    for kind, items in presets.items():
        print(kind.replace("_", " ") + ":")
        if not items:
            print("  (none yet)")
        for it in items:
            print(f"  {it['name']:<28} {it['description']}")
    return 0
