"""``snrkit demo``: run snrkit on the embedded invented demo systems."""

from ._common import print_json

__all__ = ["add_parser", "run", "demo_files"]


def demo_files():
    """Paths of the shipped demo system files, sorted by name."""
    from ..tables import data_path
    return sorted(data_path("demo").glob("*.toml"))


def add_parser(p):
    p.add_argument("--json", action="store_true", help="print one JSON object instead of tables")


def run(args):
    from ..io.systemfile import load_system
    from ..describe import describe_system
    from .describe import format_description
    import tomllib
    results = []
    texts = []
    for path in demo_files():
        system = load_system(path)
        desc = describe_system(system)
        title = tomllib.loads(path.read_text()).get("title", path.stem)
        results.append({"file": path.name, "title": title, **desc})
        texts.append(format_description(desc, title=f"{title}  [{path.name}]"))
    if args.json:
        print_json({"systems": results})
    else:
        print("snrkit demo: invented systems (no real star or planet); planning estimates only\n")
        print("\n\n".join(texts))
    return 0
