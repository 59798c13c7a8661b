"""A small reader of deploy/Containerfile: stages and their instructions, in order.

Enough of the Dockerfile syntax for our file (comments, line continuations, ``FROM … AS``,
``COPY [--from=stage]``, ``ENV k=v …``, exec-form ``CMD`` and ``HEALTHCHECK … CMD``); the
tests use it to check the file's shape and to replay its steps outside a container.
"""

from __future__ import annotations

import json
import shlex
from dataclasses import dataclass, field
from pathlib import Path

REPO = Path(__file__).resolve().parents[2]
CONTAINERFILE = REPO / "deploy" / "Containerfile"


@dataclass
class Instruction:
    keyword: str
    args: str


@dataclass
class Stage:
    base: str
    name: str
    instructions: list[Instruction] = field(default_factory=list)

    def all(self, keyword: str) -> list[Instruction]:
        return [i for i in self.instructions if i.keyword == keyword]

    def env(self) -> dict[str, str]:
        out: dict[str, str] = {}
        for ins in self.all("ENV"):
            for token in shlex.split(ins.args):
                key, _, value = token.partition("=")
                out[key] = value
        return out

    def exec_form(self, keyword: str) -> list[str]:
        """The JSON array of the stage's last CMD (or of HEALTHCHECK's CMD)."""
        ins = self.all(keyword)[-1]
        text = ins.args
        if keyword == "HEALTHCHECK":
            text = text[text.index("CMD") + 3:]
        return json.loads(text)


def logical_lines(text: str) -> list[str]:
    out, current = [], ""
    for raw in text.splitlines():
        line = raw.strip()
        if not current and (not line or line.startswith("#")):
            continue
        if line.startswith("#"):  # a comment inside a continued instruction
            continue
        if line.endswith("\\"):
            current += line[:-1] + " "
            continue
        out.append(current + line)
        current = ""
    if current:
        out.append(current)
    return out


def parse(path: Path = CONTAINERFILE) -> list[Stage]:
    stages: list[Stage] = []
    for line in logical_lines(path.read_text()):
        keyword, _, args = line.partition(" ")
        keyword = keyword.upper()
        if keyword == "FROM":
            parts = args.split()
            name = parts[2] if len(parts) >= 3 and parts[1].upper() == "AS" else str(len(stages))
            stages.append(Stage(parts[0], name))
        else:
            stages[-1].instructions.append(Instruction(keyword, " ".join(args.split())))
    return stages
