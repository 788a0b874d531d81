"""JUnit XML for CI: one ``<testsuite>`` per rule family, one ``<testcase>`` per evaluated
(rule, subject), so CI lists the checks that passed too.

Error findings become ``<failure>``; warnings and notes pass with their text in
``<system-out>``. Text is escaped by ``xml.etree``; characters that XML 1.0 cannot hold at
all (XML 1.0, section 2.2, production [2] Char; section from memory) are replaced by
U+FFFD.
"""

from __future__ import annotations

import json
import re
import xml.etree.ElementTree as ET
from typing import TYPE_CHECKING

from graphmill.validate._findings import RULES, Finding, json_safe, subject_label
from graphmill.validate._leakage_checks import FAMILY as LEAKAGE

if TYPE_CHECKING:
    from graphmill.validate._report import Report

_NOT_XML_CHAR = re.compile("[^\t\n\r\x20-\ud7ff\ue000-\ufffd\U00010000-\U0010ffff]")


def xml_text(text: str) -> str:
    """``text`` with every character outside XML 1.0's Char production replaced."""
    return _NOT_XML_CHAR.sub("\ufffd", text)


def finding_text(finding: Finding) -> str:
    """Several lines describing a finding: severity and message, counts, sample, details."""
    lines = [
        f"{finding.severity}: {finding.message}",
        f"count {finding.count} of {finding.denominator} (rate {finding.rate:.6g})",
    ]
    lines += [f"  e.g. {_json(r)}" for r in finding.sample]
    if finding.details:
        lines.append(f"details: {_json(finding.details)}")
    return xml_text("\n".join(lines))


def _json(value: object) -> str:
    # JSON escapes control characters itself; other characters stay readable.
    return json.dumps(json_safe(value), sort_keys=True, ensure_ascii=False)


def testcase_name(rule: str, subject: dict[str, str]) -> str:
    return xml_text(f"{rule} [{subject_label(subject)}]")


def family_of(rule: str) -> str:
    """The JUnit suite of a rule: its catalogue family, ``leakage`` for the audit's rules."""
    return RULES[rule].family if rule in RULES else LEAKAGE


def junit_xml(report: Report) -> bytes:
    """The report as JUnit XML (UTF-8, with an XML declaration)."""
    families = [*dict.fromkeys(family_of(rule) for rule in RULES), LEAKAGE]
    by_case: dict[tuple[str, str], list[Finding]] = {}
    for finding in report.findings:
        by_case.setdefault((finding.rule, subject_label(finding.subject)), []).append(finding)
    root = ET.Element("testsuites", name="graphmill checks")
    total = failures = 0
    for family in families:
        cases = [e for e in report.evaluated if family_of(e.rule) == family]
        if not cases:
            continue
        suite = ET.SubElement(root, "testsuite", name=f"graphmill.{family}")
        failed = 0
        for evaluation in cases:
            case = ET.SubElement(
                suite,
                "testcase",
                classname=f"graphmill.{family}.{evaluation.rule}",
                name=testcase_name(evaluation.rule, evaluation.subject),
            )
            found = by_case.get((evaluation.rule, subject_label(evaluation.subject)), [])
            errors = [f for f in found if f.severity == "error"]
            if errors:
                failed += 1
                failure = ET.SubElement(
                    case, "failure", message=xml_text(errors[0].message), type=evaluation.rule
                )
                failure.text = "\n\n".join(finding_text(f) for f in errors)
            others = [f for f in found if f.severity != "error"]
            if others:
                ET.SubElement(case, "system-out").text = "\n\n".join(
                    finding_text(f) for f in others
                )
        suite.set("tests", str(len(cases)))
        suite.set("failures", str(failed))
        suite.set("errors", "0")
        suite.set("skipped", "0")
        total, failures = total + len(cases), failures + failed
    root.set("tests", str(total))
    root.set("failures", str(failures))
    root.set("errors", "0")
    ET.indent(root)
    return ET.tostring(root, encoding="utf-8", xml_declaration=True) + b"\n"
