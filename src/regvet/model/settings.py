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


#: Bounds of the runtime limits: a longer run or a larger address space is a typo, not a plan.
MAX_SECONDS = 7 * 24 * 3600
MIN_MEGABYTES, MAX_MEGABYTES = 64, 16 * 1024 * 1024


@dataclass(frozen=True)
class Option:
    """One configuration key: its TOML type, default and a one-line description."""

    name: str
    kind: str  # "float", "rules", "severity-map", "globs", "strings", "columns", "helpers", ...
    default: object
    doc: str

    @property
    def expected(self) -> str:
        return {
            "float": "a number between 0 and 1",
            "rules": "a list of rule ids",
            "severity-map": 'a table of rule id = "error", "warning" or "info"',
            "globs": "a list of glob patterns",
            "strings": "a list of strings",
            "columns": "a list of column names",
            "helpers": "a table of dotted function name = list of check families",
            "string": "a string",
            "int": "a positive whole number",
            "optional-int": "a whole number, 0 or more",
            "seconds": f"a number of seconds, more than 0 and at most {MAX_SECONDS} (a week)",
            "megabytes": f"a whole number of MB from {MIN_MEGABYTES} to {MAX_MEGABYTES} (16 TB)",
            "hc": 'one of "HC0", "HC1", "HC2", "HC3"',
        }[self.kind]


OPTIONS: tuple[Option, ...] = (
    Option("alpha", "float", 0.05, "Significance level of the tests the runtime mode judges."),
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
        "fixed_effects",
        "columns",
        (),
        "Categorical columns that are fixed effects (unit, period): their `C(...)` terms need no break test.",
    ),
    Option(
        "diagnostic_helpers",
        "helpers",
        (),
        'Functions regvet cannot read that run checks, e.g. {"ourlib.check_fit" = ["form", "variance"]}.',
    ),
    Option(
        "analysis_budget",
        "seconds",
        20.0,
        "Wall-clock limit for the static analysis of one file, in seconds; past it the file gets an "
        "`incomplete-analysis` finding instead of its findings.",
    ),
    Option(
        "analysis_max_mb",
        "int",
        10,
        "Largest Python code the static analysis reads, in MB (a notebook counts its code cells only); "
        "a larger file gets an `incomplete-analysis` finding instead of its findings.",
    ),
    # --- runtime mode (regvet check --run) ---
    Option("python", "string", "", "Interpreter that runs the analysis in runtime mode (default: regvet's own)."),
    Option("run_timeout", "seconds", 300.0, "Wall-clock limit for one script's run, in seconds."),
    Option("run_memory_mb", "megabytes", 8192, "Address-space limit for one script's run, in MB."),
    Option("serial_lags", "optional-int", 0, "Lags for Breusch-Godfrey (default by the index frequency: 4, 12 or 1)."),
    Option("time_column", "string", "", "A column that orders the data in time (besides a date index)."),
    Option("unit_column", "string", "", "The column naming the unit of a panel: serial tests run within units."),
    Option(
        "white_max_columns", "int", 40, "Largest auxiliary regression for the full White test (else the special form)."
    ),
    Option("robust_se", "hc", "HC3", "Robust standard errors reported beside the usual ones."),
    Option("robust_se_large", "hc", "HC1", "Robust standard errors used instead when n is large."),
    Option("robust_se_large_n", "int", 100000, "From this many observations on, use `robust_se_large`."),
    Option("cv_folds", "int", 5, "Folds of the cross-validation attached to compared fits."),
    Option("cv_seed", "optional-int", 0, "Seed of the cross-validation's shuffle."),
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
    fixed_effects: tuple[str, ...] = ()
    diagnostic_helpers: tuple[tuple[str, tuple[str, ...]], ...] = ()
    analysis_budget: float = 20.0
    analysis_max_mb: int = 10
    python: str = ""
    run_timeout: float = 300.0
    run_memory_mb: int = 8192
    serial_lags: int = 0  # 0: by the index frequency
    time_column: str = ""
    unit_column: str = ""
    white_max_columns: int = 40
    robust_se: str = "HC3"
    robust_se_large: str = "HC1"
    robust_se_large_n: int = 100000
    cv_folds: int = 5
    cv_seed: int = 0
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
