"""Bad studies: each gets a StudyError naming the file and the field or row.

Every case starts from a small valid study (checked first) and breaks one thing.
"""

import re
import textwrap

import pytest

from mechfit import parse_mechanism
from mechfit.cli import main
from mechfit.errors import MechfitError, StudyError
from mechfit.study import load_study

STUDY = """\
title = "A -> P (invented data)"
units = { concentration = "mM", time = "min", temperature = "degC" }

[observable.P]
kind = "concentration"

[observable.S400]
kind = "expression"
expression = "eps*[A] + base"
fitted = ["eps", "base"]
sigma = 0.01

[[run]]
name = "r1"
temperature = 25
initial = { A = 10 }
table = "r1.csv"

[[run]]
name = "r2"
temperature = 35
initial = { A = 20 }
table = "r2.csv"
"""

R1 = "time / min, P / mM, S400\n0, 0, 0.5\n1, 2.1, 0.4\n2, 3.9, 0.3\n"
R2 = "time / min, P / mM\n0.5, 4.0\n1.5, 9.0\n"

MECH = parse_mechanism("A -> P @ k1")


def write(folder, study=STUDY, **tables):
    files = {"r1.csv": R1, "r2.csv": R2}
    files.update({k.replace("_csv", ".csv"): v for k, v in tables.items()})
    for name, text in files.items():
        if text is not None:
            (folder / name).write_text(textwrap.dedent(text))
    path = folder / "study.toml"
    path.write_text(study)
    return path


def expect(path, *patterns):
    with pytest.raises(StudyError) as info:
        load_study(path)
    message = str(info.value)
    for p in patterns:
        assert re.search(p, message), f"{p!r} not in {message!r}"
    return message


def test_the_base_study_is_valid(tmp_path):
    study = load_study(write(tmp_path))
    assert study.validate_against(MECH) == ()
    assert [r.name for r in study.runs] == ["r1", "r2"]


def test_missing_study_file(tmp_path):
    expect(tmp_path / "nowhere.toml", r"nowhere\.toml: study file not found")


def test_malformed_toml(tmp_path):
    expect(write(tmp_path, STUDY + "\n[[run]\n"), r"study\.toml: not valid TOML: .*line")


def test_missing_table_file(tmp_path):
    path = write(tmp_path, r2_csv=None)
    expect(path, r"study\.toml: run\[2\]\.table: data table 'r2\.csv' not found")


def test_missing_time_column(tmp_path):
    path = write(tmp_path, r2_csv="t / min, P / mM\n0.5, 4.0\n")
    expect(path, r"r2\.csv: no column 'time'", r"t, P")


def test_misspelled_column(tmp_path):
    path = write(tmp_path, r2_csv="time / min, Pp / mM\n0.5, 4.0\n")
    expect(path, r"r2\.csv: column 'Pp' is not an observable", r"declared observables: P, S400")


def test_negative_initial_concentration(tmp_path):
    path = write(tmp_path, STUDY.replace("initial = { A = 20 }", "initial = { A = -20 }"))
    expect(path, r"study\.toml: run\[2\]\.initial\.A: negative concentration -20")


def test_negative_measured_concentration(tmp_path):
    path = write(tmp_path, r2_csv="time / min, P / mM\n0.5, 4.0\n1.5, -0.3\n")
    expect(path, r"r2\.csv:3: column 'P': negative concentration -0\.3", r"allow_negative")


def test_non_finite_value(tmp_path):
    path = write(tmp_path, r2_csv="time / min, P / mM\n0.5, nan\n1.5, 9\n")
    expect(path, r"r2\.csv:2: column 'P': 'nan' is not a finite number")
    path = write(tmp_path, r2_csv="time / min, P / mM\n0.5, 4\n1.5, inf\n")
    expect(path, r"r2\.csv:3: column 'P': 'inf' is not a finite number")


def test_text_in_a_number_cell(tmp_path):
    path = write(tmp_path, r2_csv="time / min, P / mM\n0.5, 4\n1.5, 9,1\n")
    expect(path, r"r2\.csv:3: 3 cells, but the header has 2 columns")
    path = write(tmp_path, r2_csv="time / min, P / mM\n0.5, 4\n1.5, nine\n")
    expect(path, r"r2\.csv:3: column 'P': 'nine' is not a number")


def test_negative_time(tmp_path):
    path = write(tmp_path, r2_csv="time / min, P / mM\n-0.5, 4.0\n1.5, 9.0\n")
    expect(path, r"r2\.csv:2: column 'time': negative time -0\.5")


def test_empty_time_cell(tmp_path):
    path = write(tmp_path, r2_csv="time / min, P / mM\n, 4.0\n1.5, 9.0\n")
    expect(path, r"r2\.csv:2: column 'time' is empty")


def test_unsorted_times(tmp_path):
    path = write(tmp_path, r2_csv="time / min, P / mM\n1.5, 9.0\n0.5, 4.0\n")
    expect(path, r"r2\.csv:3: run 'r2': times are not sorted \(0\.5 after 1\.5 on line 2\)")


def test_duplicated_times(tmp_path):
    path = write(tmp_path, r2_csv="time / min, P / mM\n0.5, 4.0\n0.5, 4.2\n")
    expect(path, r"r2\.csv:3: run 'r2': time 0\.5 repeats line 2", r"replicate")


def test_time_unit_of_the_wrong_kind(tmp_path):
    path = write(tmp_path, STUDY.replace('time = "min"', 'time = "g"'))
    expect(path, r"study\.toml: units\.time: 'g' is not a unit of time")
    path = write(tmp_path, r2_csv="time / g, P / mM\n0.5, 4.0\n")
    expect(path, r"r2\.csv: column 'time / g': 'g' is not a unit of time")


def test_concentration_column_unit_of_the_wrong_kind(tmp_path):
    path = write(tmp_path, r2_csv="time / min, P / kJ/mol\n0.5, 4.0\n")
    expect(path, r"r2\.csv: column 'P / kJ/mol': 'kJ/mol' is not a unit of concentration")


def test_unit_in_brackets_gets_a_hint(tmp_path):
    path = write(tmp_path, r2_csv="time [min], P / mM\n0.5, 4.0\n")
    expect(path, r"r2\.csv:1: header 'time \[min\]': write the unit after ' / '")


def test_temperature_below_absolute_zero(tmp_path):
    path = write(tmp_path, STUDY.replace("temperature = 35", "temperature = -300"))
    expect(path, r"study\.toml: run\[2\]\.temperature: -300 degC is -26\.85 K, at or below "
                 r"absolute zero")


def test_run_without_data(tmp_path):
    path = write(tmp_path, r2_csv="time / min, P / mM\n")
    expect(path, r"r2\.csv: run 'r2' has no data rows")
    path = write(tmp_path, r2_csv="time / min\n0.5\n")
    expect(path, r"r2\.csv: run 'r2' has no data: no observable column")


def test_column_without_values(tmp_path):
    path = write(tmp_path, r2_csv="time / min, P / mM, S400\n0.5, 4.0,\n1.5, 9.0,\n")
    expect(path, r"r2\.csv: column 'S400' has no values")


def test_run_without_table(tmp_path):
    path = write(tmp_path, STUDY.replace('table = "r2.csv"\n', ""))
    expect(path, r"study\.toml: run\[2\]: run 'r2' has no table")


def test_observable_naming_an_unknown_parameter(tmp_path):
    path = write(tmp_path, STUDY.replace('fitted = ["eps", "base"]', 'fitted = ["eps"]'))
    expect(path, r"study\.toml: observable\.S400: the expression names unknown parameter\(s\) "
                 r"base")


def test_observable_with_a_bad_expression(tmp_path):
    path = write(tmp_path, STUDY.replace('"eps*[A] + base"', '"eps*[A] + + * base"'))
    expect(path, r"study\.toml: observable\.S400")


def test_long_table_with_an_undeclared_run(tmp_path):
    study = STUDY.replace('table = "r1.csv"\n', "").replace('table = "r2.csv"\n', "")
    study = study.replace('title = ', 'table = "all.csv"\ntitle = ')
    long = "run, time / min, P / mM\nr1, 0, 0\nr1, 1, 2\nr2, 1, 5\nr3, 1, 4\n"
    path = write(tmp_path, study, all_csv=long)
    expect(path, r"all\.csv:5: run 'r3' is not declared in .*study\.toml", r"r1, r2")


def test_long_table_with_a_run_without_rows(tmp_path):
    study = STUDY.replace('table = "r1.csv"\n', "").replace('table = "r2.csv"\n', "")
    study = study.replace('title = ', 'table = "all.csv"\ntitle = ')
    path = write(tmp_path, study, all_csv="run, time / min, P / mM\nr1, 0, 0\nr1, 1, 2\n")
    expect(path, r"all\.csv: run 'r2' has no data rows")


def test_duplicate_run_names(tmp_path):
    path = write(tmp_path, STUDY.replace('name = "r2"', 'name = "r1"'))
    expect(path, r"study\.toml: run name 'r1' is used twice")


def test_misspelled_section_and_key(tmp_path):
    expect(write(tmp_path, STUDY + '\n[priors]\nk1 = 3\n'),
           r"study\.toml: unknown key\(s\) priors")
    expect(write(tmp_path, STUDY.replace("initial = { A = 20 }", "inital = { A = 20 }")),
           r"study\.toml: run\[2\]: unknown key\(s\) inital")


def test_unknown_observable_kind_and_law(tmp_path):
    expect(write(tmp_path, STUDY.replace('kind = "concentration"', 'kind = "absorbance"')),
           r"observable\.P: unknown kind 'absorbance'")
    expect(write(tmp_path, STUDY + '\n[temperature_law]\ndefault = "arhenius"\n'),
           r"study\.toml: temperature_law\.default: expected one of arrhenius, eyring, "
           r"constant, got 'arhenius'")


def test_bad_priors(tmp_path):
    expect(write(tmp_path, STUDY + '\n[prior]\nk1 = { distribution = "gaussian", mean = 1 }\n'),
           r"study\.toml: prior\.k1: distribution must be one of")
    expect(write(tmp_path, STUDY + '\n[prior]\nk1 = { distribution = "normal", mean = 1, '
                                   'sd = -2 }\n'),
           r"study\.toml: prior\.k1: sd must be positive")
    expect(write(tmp_path, STUDY + '\n[prior]\nk1 = { distribution = "uniform", low = 2, '
                                   'high = 1 }\n'),
           r"study\.toml: prior\.k1: low must be below high")


def test_heat_flow_without_volume(tmp_path):
    study = STUDY + textwrap.dedent("""
        [observable.q]
        kind = "heat_flow"
        unit = "mW"
        steps = { "1" = -80 }
        """)
    path = write(tmp_path, study, r2_csv="time / min, q\n0.5, 1.0\n1.5, 0.8\n")
    expect(path, r"study\.toml: run 'r2' has heat-flow data \('q'\) but no volume")


@pytest.mark.parametrize("mech_text, pattern", [
    ("B -> P @ k1", r"run 'r1': initial names species A that mechanism 'mechanism' lacks"),
    ("A -> Q @ k1", r"observable\.P: species P not in mechanism"),
    ("A -> P @ eps", r"observable\.S400: parameter\(s\) eps have the name of a rate constant"),
])
def test_validate_against_errors(tmp_path, mech_text, pattern):
    study = load_study(write(tmp_path))
    with pytest.raises(StudyError, match=pattern):
        study.validate_against(parse_mechanism(mech_text))


def test_initial_rate_repeat_with_other_conditions(tmp_path):
    study = STUDY + textwrap.dedent("""
        [observable.v0]
        kind = "initial_rate"
        species = "P"
        unit = "mM/min"

        [[initial_rates]]
        table = "rates.csv"
        temperature = 25
        """)
    rates = "run, [A]0 / mM, v0\na, 10, 0.5\na, 20, 0.9\n"
    path = write(tmp_path, study, rates_csv=rates)
    expect(path, r"rates\.csv:3: run 'a' repeats with other conditions than line 2")


def test_cli_reports_a_bad_study_without_traceback(tmp_path, capsys):
    path = write(tmp_path, r2_csv="time / min, P / mM\n1.5, 9.0\n0.5, 4.0\n")
    code = main(["check", str(path)])
    err = capsys.readouterr().err
    assert code == 2
    assert "times are not sorted" in err and "Traceback" not in err


def test_study_error_is_a_mechfit_error():
    assert issubclass(StudyError, MechfitError) and StudyError.exit_code == 2
