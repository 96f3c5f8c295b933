"""Reading and writing: system files, TOML, shipped data tables, atomic output files.

Two floors.  The ground floor imports only the base modules and serves every
package: :mod:`snrkit.io.tomlfile` (the one TOML reader and input-path
checks), :mod:`snrkit.io.tables` (the shipped data tables) and
:mod:`snrkit.io.atomic` (write-then-rename output; a writer, so the compute
packages do not import it).  Above the bodies and atmospheres,
:mod:`snrkit.io.systemfile` reads a system file into a ``System``.
"""

__all__ = []
