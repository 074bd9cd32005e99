"""The caution every rule text, help text and report ends with (a constant every layer may show)."""

CAUTION = (
    "Passing regvet does not make a model right: it finds specification checks that are missing or failed, "
    "and judgement about the economics stays with the analyst. Important results deserve review by a "
    "qualified statistician or econometrician under the rules of their field or institution."
)
