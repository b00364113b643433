"""Tests of the settings file (scorecard/settings/): round trip, atomic writing, validation, editing in place."""

from __future__ import annotations

import dataclasses
import os
import tomllib

import pytest
from hypothesis import given
from hypothesis import settings as hypothesis_settings
from hypothesis import strategies as st

from scorecard import Settings, SettingsError, read_settings, settings_from_mapping, settings_reference, write_settings
from scorecard.settings import SECTIONS, CharacteristicSettings, ProposalSettings, edit_settings, settings_to_toml


def round_trip(settings: Settings) -> Settings:
    return settings_from_mapping(tomllib.loads(settings_to_toml(settings)))


def with_characteristics(**characteristics: CharacteristicSettings) -> Settings:
    return Settings().replace(characteristics=characteristics)


# --------------------------------------------------------------------------------------------
# Round trip


def test_defaults_round_trip():
    assert round_trip(Settings()) == Settings()


def test_every_section_and_key_is_written():
    document = tomllib.loads(settings_to_toml(Settings()))
    for name, cls in SECTIONS.items():
        assert set(document[name]) == {spec.name for spec in dataclasses.fields(cls)}


def test_characteristics_round_trip():
    settings = Settings().replace(
        outcome={"column": "status", "bad": ("bad", "written off"), "good": ("good",), "indeterminate": ("cured",)},
        samples={"out_of_time_from": "2025-07-01", "holdout_fraction": 0.25},
        checks={"grades": (450.0, 500.5, 620.0)},
        report={"title": 'The "new" book \\ 2025', "lender": "Tab\there, line\nbreak"},
        characteristics={
            "income": CharacteristicSettings(kind="numeric", use="auto", cuts=(-1.5, 0.0, 1e-7, 1500.0, 2.5e16),
                                             special_values=(-1.0, 999.0), specials=("own", 2), missing=1),
            "home": CharacteristicSettings(kind="categorical", use="always",
                                           classes=(("own",), ("rent", "other"), ('say "no"', "back\\slash")),
                                           unseen=2, label="Home status", reason_code="R07"),
            "months since: last arrears": CharacteristicSettings(use="never"),
            "ï.quoted key": CharacteristicSettings(bad_rate_shape="rises", cuts=(3.0,)),
            "": CharacteristicSettings(kind="numeric"),
        },
    )
    assert round_trip(settings) == settings


def test_written_file_reads_back_with_comments_and_header(tmp_path):
    settings = with_characteristics(
        income=CharacteristicSettings(kind="numeric", cuts=(10.0, 20.0)),
        branch=CharacteristicSettings(use="never"),
    )
    path = write_settings(settings, tmp_path / "scorecard.toml", header="first line\nsecond line",
                          comments={"income": "IV 0.1234 (medium)", "branch": "left out: every row has the same value (7)"})
    text = path.read_text(encoding="utf-8")
    assert text.startswith("# first line\n# second line\n")
    assert "[characteristics.income]\n# IV 0.1234 (medium)\n" in text
    assert '[characteristics.branch]\n# left out: every row has the same value (7)\nkind = ""\nuse = "never"\n' in text
    loaded = read_settings(path)
    assert loaded == dataclasses.replace(settings, folder=str(tmp_path))


finite_floats = st.floats(allow_nan=False, allow_infinity=False)
level_names = st.text(max_size=12)


@hypothesis_settings(derandomize=True, max_examples=100, deadline=None)
@given(cuts=st.lists(finite_floats, min_size=1, max_size=12, unique=True).map(lambda c: tuple(sorted(set(c)))))
def test_random_cut_lists_round_trip(cuts):
    settings = with_characteristics(x=CharacteristicSettings(kind="numeric", cuts=cuts))
    back = round_trip(settings).characteristics["x"].cuts
    assert back == cuts  # exactly: repr of a float reads back as the same float


@hypothesis_settings(derandomize=True, max_examples=60, deadline=None)
@given(levels=st.lists(level_names, min_size=2, max_size=10, unique=True), name=level_names, data=st.data())
def test_random_level_names_round_trip(levels, name, data):
    split = data.draw(st.integers(min_value=1, max_value=len(levels) - 1))
    classes = (tuple(levels[:split]), tuple(levels[split:]))
    settings = with_characteristics(**{name: CharacteristicSettings(kind="categorical", classes=classes, label=levels[0])})
    assert round_trip(settings) == settings


# --------------------------------------------------------------------------------------------
# Writing


def test_write_settings_leaves_no_temporary_file(tmp_path):
    path = write_settings(Settings(), tmp_path / "scorecard.toml")
    assert sorted(p.name for p in tmp_path.iterdir()) == ["scorecard.toml"]
    assert read_settings(path).outcome == Settings().outcome


def test_write_settings_replaces_an_existing_file_when_complete(tmp_path):
    path = tmp_path / "scorecard.toml"
    path.write_text("# the analyst's edits\n", encoding="utf-8")
    write_settings(Settings().replace(outcome={"column": "status"}), path)
    assert read_settings(path).outcome.column == "status"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["scorecard.toml"]


def test_failed_write_leaves_the_existing_file_and_no_temporary(tmp_path):
    path = tmp_path / "scorecard.toml"
    path.write_bytes(b"# the analyst's edits\n")
    # a lone surrogate cannot be encoded as UTF-8: the write fails part-way through the text
    broken = Settings().replace(report={"title": "Scorecard \ud800"})
    with pytest.raises(UnicodeEncodeError):
        write_settings(broken, path)
    assert path.read_bytes() == b"# the analyst's edits\n"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["scorecard.toml"]


def test_written_file_has_the_mode_of_a_plain_write(tmp_path):
    plain = tmp_path / "plain.toml"
    plain.write_text("")
    written = write_settings(Settings(), tmp_path / "scorecard.toml")
    assert written.stat().st_mode == plain.stat().st_mode
    os.chmod(written, 0o640)
    write_settings(Settings(), written)
    assert written.stat().st_mode & 0o777 == 0o640  # replacing keeps the file's own mode


# --------------------------------------------------------------------------------------------
# Reading: files


def test_missing_settings_file(tmp_path):
    with pytest.raises(SettingsError, match=r"scorecard\.toml: settings file not found"):
        read_settings(tmp_path / "scorecard.toml")


def test_invalid_toml_names_the_file_and_line(tmp_path):
    path = tmp_path / "scorecard.toml"
    path.write_text("[classing]\nmax_classes = = 3\n")
    with pytest.raises(SettingsError, match=r"scorecard\.toml: not a valid TOML settings file: .*line 2"):
        read_settings(path)


# --------------------------------------------------------------------------------------------
# Reading: unknown keys, wrong types, impossible values


def test_unknown_section_suggests_the_close_one():
    with pytest.raises(SettingsError, match=r"unknown section 'sample'\. Did you mean 'samples'\?"):
        settings_from_mapping({"sample": {"seed": 3}})


def test_unknown_key_suggests_the_close_one():
    with pytest.raises(SettingsError, match=r"unknown key in \[classing\] 'min_class_shar'\. Did you mean 'min_class_share'\?"):
        settings_from_mapping({"classing": {"min_class_shar": 0.05}})


def test_unknown_characteristic_key_suggests_the_close_one():
    with pytest.raises(SettingsError, match=r"unknown key in \[characteristics\.income\] 'cut'\. Did you mean 'cuts'\?"):
        settings_from_mapping({"characteristics": {"income": {"cut": [1, 2]}}})


def test_unknown_key_names_the_file(tmp_path):
    path = tmp_path / "scorecard.toml"
    path.write_text("[fit]\nsolvr = 'newton'\n")
    with pytest.raises(SettingsError, match=r"scorecard\.toml: unknown key in \[fit\] 'solvr'\. Did you mean 'solver'\?"):
        read_settings(path)


@pytest.mark.parametrize(("section", "key", "value", "shown"), [
    ("classing", "min_class_share", "five", "'five'"),
    ("classing", "max_classes", 2.5, "2.5"),
    ("outcome", "bad", "x", "'x'"),
    ("samples", "seed", True, "True"),
    ("characteristics.income", "cuts", [1, "2"], r"\[1, '2'\]"),
])
def test_wrong_type(section, key, value, shown):
    document = {"characteristics": {"income": {key: value}}} if section.startswith("characteristics") else {section: {key: value}}
    with pytest.raises(SettingsError, match=rf"{section}\.{key} = {shown} has the wrong type"):
        settings_from_mapping(document)


@pytest.mark.parametrize(("document", "message"), [
    ({"classing": {"min_class_share": 0.6}}, r"classing\.min_class_share = 0\.6 is not possible: it must be a share between 0 and 0\.5"),
    ({"scaling": {"pdo": -20}}, r"scaling\.pdo = -20 is not possible: it must be a positive number"),
    ({"selection": {"p_enter": 0.5, "p_remove": 0.1}}, r"p_enter \(0\.5\) is above selection\.p_remove"),
    ({"outcome": {"column": "y"}, "ledger": {"id_column": "y"}}, r"ledger\.id_column and outcome\.column both name column .y."),
    ({"classing": {"max_classes": 1}}, r"classing\.max_classes = 1 is not possible: it must be 2 or more"),
    ({"samples": {"holdout_fraction": 1.0}}, r"samples\.holdout_fraction = 1\.0 is not possible"),
    ({"characteristics": {"home": {"classes": []}}}, r"characteristics\.home\.classes needs at least 1 class, and every class at least 1 level"),
    ({"characteristics": {"home": {"classes": [["own"], []]}}}, r"characteristics\.home\.classes needs at least 1 class, and every class at least 1 level"),
    ({"characteristics": {"income": {"cuts": [30, 10, 20]}}}, r"characteristics\.income\.cuts must be strictly ascending numbers, got \[30\.0, 10\.0, 20\.0\]"),
    ({"characteristics": {"income": {"cuts": [10, 10]}}}, r"characteristics\.income\.cuts must be strictly ascending"),
    ({"checks": {"psi_watch": 0.25, "psi_act": 0.25}}, r"checks\.psi_act \(0\.25\) must be larger than checks\.psi_watch \(0\.25\)"),
    ({"checks": {"psi_watch": 0.3}}, r"checks\.psi_act \(0\.25\) must be larger than checks\.psi_watch \(0\.3\)"),
    ({"characteristics": {"home": {"classes": [["own", "rent"], ["rent"]]}}}, r"characteristics\.home\.classes lists level 'rent' in more than one class"),
    ({"outcome": {"bad": ["1", "2"], "good": ["0", "2"]}}, r"outcome value '2' is listed both as bad and as good"),
    ({"samples": {"out_of_time_from": "2025-13-01"}}, r"samples\.out_of_time_from = '2025-13-01' is not possible: it must be an ISO date"),
    ({"samples": {"out_of_time_from": "20250701"}}, r"samples\.out_of_time_from = '20250701' is not possible"),
    ({"samples": {"out_of_time_from": "next July"}}, r"samples\.out_of_time_from = 'next July' is not possible"),
    ({"characteristics": {"x": {"cuts": [1], "classes": [["a"], ["b"]]}}}, r"characteristics\.x has both cuts and classes"),
    ({"characteristics": {"x": {"missing": 0}}}, r"characteristics\.x\.missing = 0 is not possible: class numbers start at 1"),
])
def test_impossible_values(document, message):
    with pytest.raises(SettingsError, match=message):
        settings_from_mapping(document)


def test_section_must_be_a_table():
    with pytest.raises(SettingsError, match=r"\[classing\] must be a table of keys, not int"):
        settings_from_mapping({"classing": 3})


# --------------------------------------------------------------------------------------------
# The reference table


def test_reference_lists_every_key_with_its_default():
    reference = {key: (default, meaning) for key, default, meaning in settings_reference()}
    expected = {f"{name}.{spec.name}": spec for name, cls in SECTIONS.items() for spec in dataclasses.fields(cls)}
    expected.update({f"characteristics.NAME.{spec.name}": spec for spec in dataclasses.fields(CharacteristicSettings)
                     if spec.name != "proposal"})  # a table of its own: its keys are listed one by one
    expected.update({f"characteristics.NAME.proposal.{spec.name}": spec for spec in dataclasses.fields(ProposalSettings)})
    assert set(reference) == set(expected)
    for key, spec in expected.items():
        default, meaning = reference[key]
        assert meaning == spec.metadata["meaning"] and meaning
        if spec.default is None:
            assert default == "(none)"
        else:
            value = tomllib.loads(f"value = {default}")["value"]
            assert value == (list(spec.default) if isinstance(spec.default, tuple) else spec.default), key


# --------------------------------------------------------------------------------------------
# Editing in place (scorecard set), with the style-preserving TOML library


def _written(tmp_path, text: str):
    path = tmp_path / "scorecard.toml"
    path.write_text(text, encoding="utf-8")
    return path


def test_editing_a_title_that_held_a_comment_sign_keeps_the_file_valid(tmp_path):
    # the hand-written editor took '  #' inside the old value for the start of the comment
    path = _written(tmp_path, '[report]\ntitle = "Loans  # and lines"  # title of the reports\n')
    edit_settings(path, {"report.title": "Personal loans"})
    assert path.read_text(encoding="utf-8") == '[report]\ntitle = "Personal loans"  # title of the reports\n'
    assert read_settings(path).report.title == "Personal loans"


def test_a_multi_line_cuts_array_can_be_edited(tmp_path):
    # the hand-written editor refused a value spread over several lines
    path = _written(tmp_path, (
        "# the analyst's file\n\n"
        "[characteristics.age]\n"
        'kind = "numeric"\n'
        "cuts = [\n    25,\n    35,  # a round number\n    50,\n]\n"
        "missing = 1  # with the first class\n"
    ))
    edit_settings(path, {"characteristics.age.cuts": [30, 45]})
    text = path.read_text(encoding="utf-8")
    assert read_settings(path).characteristic("age").cuts == (30.0, 45.0)
    assert text.startswith("# the analyst's file\n\n[characteristics.age]\nkind = \"numeric\"\ncuts = [30, 45]\n")
    assert text.endswith("missing = 1  # with the first class\n")


def test_editing_keeps_every_other_line_and_adds_new_keys_and_sections(tmp_path):
    original = settings_to_toml(Settings().replace(characteristics={"age": CharacteristicSettings(kind="numeric")}),
                                header="written by hand\nand kept", comments={"age": "IV 0.2"})
    path = _written(tmp_path, original)
    edit_settings(path, {"samples.seed": 7, "characteristics.age.use": "never", "characteristics.new one.use": "never"})
    text = path.read_text(encoding="utf-8")
    changed = [line for line in text.splitlines() if line not in original.splitlines()]
    assert changed == ['seed = 7  # seed of the hold-out split (a seeded hash of each row\'s id, or of the row)', 'use = "never"',
                       '[characteristics."new one"]', 'use = "never"']
    assert read_settings(path).characteristic("new one").use == "never"


def test_an_edit_that_breaks_the_file_leaves_it_untouched(tmp_path):
    path = _written(tmp_path, "[samples]\nseed = 3\n")
    with pytest.raises(SettingsError, match="samples.seed = -1 is not possible"):
        edit_settings(path, {"samples.seed": -1})
    assert path.read_text(encoding="utf-8") == "[samples]\nseed = 3\n"


# --------------------------------------------------------------------------------------------
# Old names: refused with the new one named, never read under a guess


@pytest.mark.parametrize("document, message", [
    ({"classing": {"trend": "ascending"}},
     r"\[classing\] trend is an old name: the key is now bad_rate_shape\. Write bad_rate_shape = \"falls\" instead "
     r"\('ascending' there means 'falls'\)"),
    ({"classing": {"max_groups": 6}}, r"\[classing\] max_groups is an old name: the key is now max_classes\. Write max_classes = 6"),
    ({"classing": {"min_group_share": 0.1}}, r"\[classing\] min_group_share is an old name: the key is now min_class_share"),
    ({"characteristics": {"age": {"trend": "descending"}}},
     r"\[characteristics\.age\] trend is an old name: the key is now bad_rate_shape\. Write bad_rate_shape = \"rises\""),
    ({"characteristics": {"home": {"groups": [["own"], ["rent"]]}}},
     r"\[characteristics\.home\] groups is an old name: the key is now classes\. Write classes = \[\[\"own\"\], \[\"rent\"\]\]"),
])
def test_an_old_key_is_refused_naming_the_new_one(document, message):
    with pytest.raises(SettingsError, match=message):
        settings_from_mapping(document, source="scorecard.toml")


@pytest.mark.parametrize("value, message", [
    ("ascending", "'ascending' is the old word; the shape it meant is 'falls'"),
    ("none", "'none' is the old word; the shape it meant is 'any'"),
])
def test_an_old_bad_rate_shape_says_what_it_means(value, message):
    with pytest.raises(SettingsError, match=f"must be one of from-data, falls, rises, falls-then-rises, rises-then-falls, any. {message}"):
        settings_from_mapping({"classing": {"bad_rate_shape": value}})


@pytest.mark.parametrize("shape", ["falls-then-rises", "rises-then-falls"])
def test_the_single_bend_shapes_are_settings_values(shape):
    settings = settings_from_mapping({"classing": {"bad_rate_shape": shape}, "characteristics": {"age": {"bad_rate_shape": shape}}})
    assert settings.classing.bad_rate_shape == shape == settings.characteristic("age").bad_rate_shape


def test_a_settings_file_with_an_old_key_stops_the_build_with_exit_code_2(tmp_path):
    import io

    from scorecard.cli import main

    path = tmp_path / "old.toml"
    path.write_text('[ledger]\npath = "ledger.csv"\n\n[classing]\ntrend = "auto"\n', encoding="utf-8")
    err = io.StringIO()
    assert main(["build", str(path)], stdout=io.StringIO(), stderr=err) == 2
    assert err.getvalue() == (f"scorewright: error: {path}: [classing] trend is an old name: the key is now bad_rate_shape. "
                              "Write bad_rate_shape = \"from-data\" instead ('auto' there means 'from-data'), then run again.\n")


def test_a_categorical_characteristic_may_have_one_class():
    # as a numeric one may have no cut: what the tool proposes when no two of its levels differ significantly
    settings = settings_from_mapping({"characteristics": {"home": {"classes": [["own", "rent"]]}}})
    assert settings.characteristic("home").classes == (("own", "rent"),)


# --------------------------------------------------------------------------------------------
# Special values with their meanings


def test_special_values_are_a_table_of_codes_and_meanings_or_a_list_of_codes(tmp_path):
    path = tmp_path / "s.toml"
    path.write_text('[characteristics.months]\nspecial_values = {-1 = "no delinquency on record", "999" = ""}\n'
                    '[characteristics.enquiries]\nspecial_values = [99]\n', encoding="utf-8")
    settings = read_settings(path)
    months = settings.characteristic("months")
    assert months.special_values == ((-1.0, "no delinquency on record"), (999.0, ""))
    assert months.special_codes == (-1.0, 999.0) and months.special_meanings == ("no delinquency on record", "")
    assert settings.characteristic("enquiries").special_values == ((99.0, ""),)
    text = settings_to_toml(settings)
    assert 'special_values = {"-1" = "no delinquency on record", "999" = ""}' in text  # written back as a table
    assert "special_values = [99]" in text  # no meaning given: a list, as the analyst wrote it
    assert read_settings_text(tmp_path, text).characteristics == settings.characteristics
    assert CharacteristicSettings(special_values=(-1.0,)).special_values == ((-1.0, ""),)  # bare codes from Python


def test_a_special_value_that_is_not_a_number_is_named(tmp_path):
    path = tmp_path / "s.toml"
    path.write_text('[characteristics.months]\nspecial_values = {none = "no record"}\n', encoding="utf-8")
    with pytest.raises(SettingsError, match=r"characteristics.months.special_values = .* a table of codes and their meanings"):
        read_settings(path)


def read_settings_text(folder, text):
    path = folder / "again.toml"
    path.write_text(text, encoding="utf-8")
    return read_settings(path)
