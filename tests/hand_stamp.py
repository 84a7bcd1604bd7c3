"""A validation stamp as `bridgecalc check` would leave it, without running the
checks: for output tests that must not depend on the checks' cache."""

from bridgecalc.validation import stamp as stamps

HAND_STAMP = stamps.Stamp("0.1.0", "0123456789abcdef", "2024-01-02T03:04:05Z", 58, 0,
                          [stamps.CaseSummary("iso10211-case2", "ISO 10211:2017 Annex C, case 2",
                                              10, 0)])
