"""The invented demo scenario: a ledger generator and its settings (shipped inside the wheel as ``scorecard.demo``)."""
