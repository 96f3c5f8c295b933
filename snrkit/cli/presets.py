"""``snrkit presets``: the shipped presets."""

from ._common import print_json

__all__ = ["add_parser", "run", "collect_presets", "preset_file"]


def add_parser(p):
    p.add_argument("--json", action="store_true", help="print one JSON object")
    p.add_argument("--show", metavar="NAME",
                   help="print one preset's file (scenario, mode, demo system or catalogue "
                        "mapping) and its path: a commented starting point to edit")
    p.add_argument("--out", metavar="FILE.toml",
                   help="with --show: write the file there instead of printing it")


def collect_presets():
    """Presets by kind: scenarios, modes, demo systems and catalogue mappings.

    Each entry is ``{"name": ..., "description": ...}``.  Kinds whose layer
    is not installed yet are empty lists.
    """
    from ..io.tomlfile import read_toml
    from .demo import demo_files
    from ..io.tables import data_path
    out = {"scenarios": [], "modes": [], "demo_systems": [], "catalogue_mappings": []}
    for path in sorted(data_path("catalogue_mappings").glob("*.toml")):
        out["catalogue_mappings"].append({"name": path.stem, "description": read_toml(
            path, "catalogue mapping").get("title", "")})
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
    from ..io.tables import data_path
    from .demo import demo_files
    import re
    if not re.fullmatch(r"[A-Za-z0-9][A-Za-z0-9._-]{0,100}", str(name)) or ".." in str(name):
        raise InputError("preset", name, "a preset name (letters, digits, '.', '_', '-')")
    candidates = [data_path(folder, f"{name}.toml")
                  for folder in ("scenarios", "instruments", "catalogue_mappings")]
    candidates += [p for p in demo_files() if p.stem == name]
    for path in candidates:
        if path.is_file():
            return path
    names = [it["name"] for items in collect_presets().values() for it in items]
    raise InputError("preset", name, "one of " + ", ".join(names))


def run(args):
    if args.out and not args.show:
        from ..errors import InputError
        raise InputError("--out", args.out, "only with --show NAME")
    if args.show:
        path = preset_file(args.show)
        text = f"# from {path}\n" + path.read_text(encoding="utf-8")
        if args.out:
            from ..io.atomic import atomic_write_text
            # a copy is the user's to edit: the shipped file's "edit the script" line goes
            lines = text.splitlines(keepends=True)
            text = "".join(line for line in lines if "edit the script, not this file" not in line)
            atomic_write_text(args.out, text)
            print(f"wrote {args.out} (from {path.name})")
        else:
            print(text, end="")
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
