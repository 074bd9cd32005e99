"""Settings: one frozen, hashable value built from defaults, config file and CLI flags.

:data:`OPTIONS` is the single table of configuration keys. It drives TOML
validation (``regvet.config``), the README's configuration section and the
language server's client settings; nothing else lists the keys.
"""

from __future__ import annotations

from dataclasses import dataclass, field

#: Check families a diagnostic can perform. Rules and ``diagnostic_helpers`` name families,
#: never individual functions.
FAMILIES: dict[str, str] = {
    "form": "functional form (RESET and relatives)",
    "variance": "heteroskedasticity (Breusch-Pagan, White, ...)",
    "normality": "normality of the errors (Jarque-Bera, ...)",
    "serial": "serial correlation (Durbin-Watson, Breusch-Godfrey, ...)",
    "breaks": "structural breaks (Chow, CUSUM, interaction F tests)",
    "collinearity": "collinearity (VIF, condition number)",
}

DEFAULT_EXCLUDE: tuple[str, ...] = (".venv", "venv", ".git", "build", "site-packages", "node_modules")


@dataclass(frozen=True)
class Option:
    """One configuration key: its TOML type, default and a one-line description."""

    name: str
    kind: str  # "float", "rules", "severity-map", "globs", "strings", "helpers"
    default: object
    doc: str

    @property
    def expected(self) -> str:
        return {
            "float": "a number between 0 and 1",
            "rules": "a list of rule ids",
            "severity-map": 'a table of rule id = "error" | "warning" | "info"',
            "globs": "a list of glob patterns",
            "strings": "a list of strings",
            "helpers": "a table of dotted function name = list of check families",
        }[self.kind]


OPTIONS: tuple[Option, ...] = (
    Option("alpha", "float", 0.05, "Significance level for tests (used by the runtime mode)."),
    Option("only", "rules", (), "Report only these rules."),
    Option("skip", "rules", (), "Never report these rules."),
    Option("severity", "severity-map", (), "Per-rule severity overrides."),
    Option("exclude", "globs", (), "Extra paths to leave out of folder scans (added to the defaults)."),
    Option(
        "break_candidates",
        "strings",
        (),
        "Columns (or pandas query expressions) where a structural break is suspected.",
    ),
    Option(
        "diagnostic_helpers",
        "helpers",
        (),
        "Functions regvet cannot read that run checks, e.g. {\"ourlib.check_fit\" = [\"form\", \"variance\"]}.",
    ),
)


@dataclass(frozen=True)
class Settings:
    """Everything that changes what regvet reports. Hashable, so caches can key on it."""

    alpha: float = 0.05
    only: frozenset[str] = frozenset()
    skip: frozenset[str] = frozenset()
    severity: tuple[tuple[str, str], ...] = ()
    exclude: tuple[str, ...] = ()
    break_candidates: tuple[str, ...] = ()
    diagnostic_helpers: tuple[tuple[str, tuple[str, ...]], ...] = ()
    #: Where the settings came from (a config file path), for messages only.
    source: str | None = field(default=None, compare=False)

    def severity_for(self, rule: str) -> str | None:
        for rid, sev in self.severity:
            if rid == rule:
                return sev
        return None

    def helper_families(self) -> dict[str, tuple[str, ...]]:
        return dict(self.diagnostic_helpers)

    def enabled(self, rule: str) -> bool:
        if self.only and rule not in self.only:
            return False
        return rule not in self.skip
