"""What one file's import did: :class:`ImportResult`."""

from __future__ import annotations

from dataclasses import dataclass, field

from tracker.errors import BadFile, BadRow

MAX_PROBLEMS = 1000  # keep the first this many (every one is counted)


@dataclass
class ImportResult:
    """What one file's import did."""

    kind: str
    file: str
    rows: int = 0
    added: int = 0
    skipped: int = 0  # already present with the same content
    refused: int = 0  # rows
    problems: list[BadRow] = field(default_factory=list)  # the first MAX_PROBLEMS
    problem_count: int = 0  # all of them
    refused_rows: list[dict] = field(default_factory=list)  # unless streamed to refused_file
    refused_file: str | None = None
    warnings: list[str] = field(default_factory=list)  # written, but worth a look

    def to_dict(self) -> dict:
        return {"kind": self.kind, "file": self.file, "rows": self.rows, "added": self.added,
                "skipped": self.skipped, "refused": self.refused, "problem_count": self.problem_count,
                "problems": [str(p) for p in self.problems], "warnings": list(self.warnings),
                **({"refused_file": self.refused_file} if self.refused_file else {})}

    def refusal(self) -> BadFile:
        return BadFile(self.file, self.problems, rows=self.refused, total=self.problem_count)
