"""Small case files of the batch tests (invented scenarios), written into a directory."""

from __future__ import annotations

from pathlib import Path

#: A spin 1/2 in a field (the tracer molecule PX-1, invented): two responses.
FIELD_SPIN = '''
[model]
description = "Free spin 1/2 of the tracer molecule PX-1 in a field h along z"
hamiltonian = "-h*q.z"
[parameters]
h = { assume = "real", value = 1 }
[sites]
q = "spin 1/2"
[[response]]
label = "mz"
A = "q.z"
[[response]]
label = "mx"
A = "q.x"
'''

#: A two-level defect (invented device TD-3) with a transverse dipole: one response.
TUNNEL = '''
[model]
description = "Two-level defect TD-3: splitting Delta, transverse dipole drive"
hamiltonian = "Delta*q.z"
[parameters]
Delta = { assume = "positive", value = 2 }
[sites]
q = "spin 1/2"
[[response]]
label = "dipole"
A = "2*q.x"
'''

#: No [[response]]: one task, the levels only.
LEVELS_ONLY = '''
[model]
hamiltonian = "D*s.z^2"
[parameters]
D = { assume = "real", value = 1 }
[sites]
s = "spin 1"
'''

#: Malformed: an unknown operator in H.
MALFORMED = '''
[model]
hamiltonian = "J*q.w"
[parameters]
J = { assume = "real", value = 1 }
[sites]
q = "spin 1/2"
'''


def write_cases(folder: Path, **texts: str) -> list[str]:
    """Write ``name=text`` pairs as ``folder/name.toml``; return the paths as strings."""
    folder.mkdir(parents=True, exist_ok=True)
    paths = []
    for name, text in texts.items():
        path = folder / f"{name}.toml"
        path.write_text(text, encoding="utf-8")
        paths.append(str(path))
    return paths
