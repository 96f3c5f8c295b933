"""``snrkit presets``: the shipped presets."""

from ._common import print_json

__all__ = ["add_parser", "run", "collect_presets"]


def add_parser(p):
    p.add_argument("--json", action="store_true", help="print one JSON object")


def collect_presets():
    """Presets by kind: ``{"scenarios": [...], "modes": [...], "demo_systems": [...]}``.

    Each entry is ``{"name": ..., "description": ...}``.  Kinds whose layer
    is not installed yet are empty lists.
    """
    import tomllib
    from .demo import demo_files
    out = {"scenarios": [], "modes": [], "demo_systems": []}
    for path in demo_files():
        out["demo_systems"].append({"name": path.stem,
                                    "description": tomllib.loads(path.read_text()).get("title", "")})
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


def run(args):
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
