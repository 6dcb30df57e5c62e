"""The caution printed with every report."""

CAUTION = (
    "Caution: conceptual-design estimate only. Not flight-qualified; it does not replace "
    "range-safety, structural, guidance or certification analysis. Defer to local "
    "regulations, range safety and licensed engineering practice."
)
