"""Policies: every rule kind passes, warns and fails on crafted reports; CLI exit codes."""

import copy
import json

import pytest
from haarline.report.policy import PolicyError, evaluate_policy, load_policy, parse_policy
from haarline.service.cli import main as cli

REPORT = {
    "expressibility": {"kl": 0.03, "interval": [0.02, 0.04], "bias": 0.004},
    "entanglement": {"meyer_wallach": 0.6, "interval": [0.58, 0.62]},
    "trainability": {
        "barren_plateau": False,
        "points": [
            {"qubits": 4, "variance": 1e-3, "interval": [8e-4, 1.2e-3]},
            {"qubits": 8, "variance": 1e-5, "interval": [5e-6, 2e-5]},
        ],
    },
    "capacity": {"redundant": 2},
}


def status(rule, report=REPORT):
    return evaluate_policy(parse_policy({"rules": [rule]}), report)["rules"][0]["status"]


@pytest.mark.parametrize(
    "rule,want",
    [
        ({"metric": "expressibility.kl", "fail_above": 0.05}, "pass"),
        ({"metric": "expressibility.kl", "fail_above": 0.01}, "fail"),
        ({"metric": "expressibility.kl", "warn_above": 0.02, "fail_above": 0.05}, "warn"),
        ({"metric": "entanglement.meyer_wallach", "fail_below": 0.5}, "pass"),
        ({"metric": "entanglement.meyer_wallach", "fail_below": 0.7}, "fail"),
        ({"metric": "entanglement.meyer_wallach", "warn_below": 0.65, "fail_below": 0.5}, "warn"),
        ({"metric": "trainability.barren_plateau", "expect": False}, "pass"),
        ({"metric": "trainability.barren_plateau", "expect": True}, "fail"),
        ({"metric": "capacity.redundant", "fail_above": 2}, "pass"),
        ({"metric": "capacity.redundant", "fail_above": 1}, "fail"),
        ({"metric": "capacity.redundant", "expect": 2}, "pass"),
        ({"metric": "trainability.points[qubits=8].variance", "fail_below": 1e-6}, "pass"),
        ({"metric": "trainability.points[qubits=8].variance", "fail_below": 1e-4}, "fail"),
        ({"metric": "trainability.points[1].variance", "fail_below": 1e-4}, "fail"),
        # interval judging: fail only when the whole interval is past the threshold
        ({"metric": "expressibility.kl", "fail_above": 0.035, "judge": "interval"}, "warn"),
        ({"metric": "expressibility.kl", "fail_above": 0.01, "judge": "interval"}, "fail"),
        ({"metric": "expressibility.kl", "fail_above": 0.05, "judge": "interval"}, "pass"),
        (
            {
                "metric": "trainability.points[qubits=8].variance",
                "fail_below": 1.5e-5,
                "judge": "interval",
            },
            "warn",
        ),
    ],
)
def test_rule_outcomes(rule, want):
    assert status(rule) == want


def test_undecided_verdict_warns():
    report = copy.deepcopy(REPORT)
    report["trainability"]["barren_plateau"] = None
    assert status({"metric": "trainability.barren_plateau", "expect": False}, report) == "warn"


def test_overall_status_is_the_worst_rule():
    policy = parse_policy(
        {
            "name": "x",
            "rules": [
                {"metric": "expressibility.kl", "fail_above": 0.05},
                {"metric": "capacity.redundant", "fail_above": 1},
            ],
        }
    )
    result = evaluate_policy(policy, REPORT)
    assert result["status"] == "fail" and [r["status"] for r in result["rules"]] == ["pass", "fail"]
    assert "above the fail threshold 1" in result["rules"][1]["message"]


@pytest.mark.parametrize(
    "data,path,words",
    [
        ({"rules": []}, "rules", ["at least 1"]),
        ({"rules": [{"metric": "x"}]}, "rules[0]", ["expect"]),
        ({"rules": [{"metric": "x", "fail_above": 1, "expect": 1}]}, "rules[0]", ["cannot"]),
        ({"rules": [{"metric": "x", "fail_abov": 1}]}, "rules[0].fail_abov", ["unknown key"]),
        (
            {"rules": [{"metric": "x", "warn_above": 2, "fail_above": 1}]},
            "rules[0]",
            ["warn_above"],
        ),
        (
            {"rules": [{"metric": "x", "fail_above": 1, "judge": "mean"}]},
            "rules[0].judge",
            ["mean"],
        ),
        ([1], "(root)", ["object"]),
    ],
)
def test_bad_policies(data, path, words):
    with pytest.raises(PolicyError) as info:
        parse_policy(data)
    p = info.value.problems[0]
    assert p.path == path
    for word in words:
        assert word in p.message


@pytest.mark.parametrize(
    "metric,words",
    [
        ("capacity.rank", ["no 'rank'"]),
        ("trainability.points[qubits=9].variance", ["no item", "qubits = 9"]),
        ("trainability.barren_plateau", ["not a number", "expect"]),
    ],
)
def test_rules_naming_missing_numbers(metric, words):
    with pytest.raises(PolicyError) as info:
        evaluate_policy(parse_policy({"rules": [{"metric": metric, "fail_above": 1}]}), REPORT)
    for word in words:
        assert word in str(info.value)


def test_metric_not_computed_says_so():
    report = {**REPORT, "capacity": None}
    with pytest.raises(PolicyError, match="null"):
        evaluate_policy(
            parse_policy({"rules": [{"metric": "capacity[0]", "fail_above": 1}]}), report
        )


def test_bundled_example_policy_parses():
    policy = load_policy("examples/review-policy.yaml")
    assert len(policy.rules) == 5


FAST = ["--pairs", "200", "--samples", "50"]


def write(tmp_path, data):
    path = tmp_path / "policy.json"
    path.write_text(json.dumps(data))
    return str(path)


def test_cli_exit_codes(capsys, tmp_path):
    ok = write(tmp_path, {"rules": [{"metric": "entanglement.meyer_wallach", "fail_below": 0.1}]})
    assert cli.main(["analyze", "ref:ry-cz-ring", *FAST, "--policy", ok]) == 0
    out = capsys.readouterr().out
    assert "Policy" in out and "pass" in out
    bad = write(tmp_path, {"rules": [{"metric": "entanglement.meyer_wallach", "fail_below": 0.99}]})
    assert cli.main(["analyze", "ref:ry-cz-ring", *FAST, "--policy", bad]) == 1
    out = capsys.readouterr().out
    assert "fail" in out
    broken = write(tmp_path, {"rules": [{"metric": "capacity.redundant", "fail_above": 1}]})
    assert cli.main(["analyze", "ref:ry-cz-ring", *FAST, "--policy", broken]) == 2
    err = capsys.readouterr().err
    assert "rules[0].metric" in err and "capacity metric" in err and "--metrics" in err
    assert cli.main(["analyze", "ref:ry-cz-ring", *FAST, "--policy", str(tmp_path / "no")]) == 2


def test_cli_policy_in_json_report(capsys, tmp_path):
    bad = write(tmp_path, {"rules": [{"metric": "expressibility.kl", "fail_above": 0.0}]})
    code = cli.main(["analyze", "ref:ry-cz-ring", *FAST, "--policy", bad, "--format", "json"])
    report = json.loads(capsys.readouterr().out)
    assert code == 1 and report["policy"]["status"] == "fail"


def test_a_rule_on_the_lie_metric_needs_it_requested():
    from haarline.report.policy import check_metrics

    policy = parse_policy({"rules": [{"metric": "lie.points[0].dimension", "fail_above": 10}]})
    with pytest.raises(PolicyError, match="needs the lie metric"):
        check_metrics(policy, ["expressibility"])
    check_metrics(policy, ["expressibility", "lie"])  # requested: nothing to say
