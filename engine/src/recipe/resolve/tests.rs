use super::*;

const MINIMAL: &str = r#"[assessment]
title = "T"
species = "S"
date = "2026-11-30"
seed = 7

[data]
genotypes = "g.csv"

[[step]]
id = "qc"
uses = "validate"
[step.params]
max_missing_locus = 0.1
"#;

fn case_with(recipe: &str) -> tempfile::TempDir {
    let dir = tempfile::tempdir().unwrap();
    std::fs::write(dir.path().join("case.toml"), recipe).unwrap();
    std::fs::write(dir.path().join("g.csv"), "sample,population,year,L1\ns1,N,2020,1/2\n").unwrap();
    dir
}

fn error_of(recipe: &str) -> String {
    let dir = case_with(recipe);
    load_recipe(dir.path(), false).unwrap_err().to_string()
}

#[test]
fn resolves_defaults_and_parameters() {
    let dir = case_with(MINIMAL);
    let recipe = load_recipe(dir.path(), false).unwrap();
    assert_eq!(recipe.assessment.date, "2026-11-30");
    assert_eq!(recipe.assessment.seed, 7);
    assert_eq!(recipe.report.thresholds, vec![50.0, 500.0]);
    assert_eq!(recipe.data.missing, vec!["", "NA", "./."]);
    let step = &recipe.steps[0];
    assert_eq!((step.id.as_str(), step.uses.as_str(), step.line), ("qc", "validate", 10));
    assert_eq!(step.params["max_missing_locus"], serde_json::json!(0.1));
    assert_eq!(step.params["min_group_size"], serde_json::json!(5));
}

#[test]
fn unknown_keys_name_the_line_and_suggest() {
    let text = MINIMAL.replace("species = \"S\"", "species = \"S\"\ntitel = \"x\"");
    assert_eq!(error_of(&text), "case.toml:4:1: unknown key `titel`\n  help: did you mean `title`?");
}

#[test]
fn unknown_parameters_name_the_line_and_suggest() {
    let text = MINIMAL.replace("max_missing_locus", "max_mising_locus");
    assert_eq!(
        error_of(&text),
        "case.toml:14:1: unknown parameter `max_mising_locus` for step \"qc\" (uses \"validate\")\n  help: did you mean `max_missing_locus`? `popgauge steps` lists each step's parameters"
    );
}

#[test]
fn out_of_range_parameters_are_refused() {
    let text = MINIMAL.replace("max_missing_locus = 0.1", "max_missing_locus = 2");
    assert!(error_of(&text).starts_with("case.toml:14:1: parameter `max_missing_locus` is 2 but must be a number from 0 to 1"));
}

#[test]
fn unknown_uses_and_duplicate_ids() {
    let text = MINIMAL.replace("uses = \"validate\"", "uses = \"validat\"");
    assert_eq!(error_of(&text), "case.toml:12:8: unknown step `uses = \"validat\"`\n  help: did you mean \"validate\"? `popgauge steps` lists the built-in steps");
    let text = format!("{MINIMAL}\n[[step]]\nid = \"qc\"\nuses = \"diversity\"\n");
    assert!(error_of(&text).starts_with("case.toml:17:6: step id \"qc\" is used twice (first at line 10)"));
}

#[test]
fn bad_dates_seeds_and_thresholds() {
    assert!(error_of(&MINIMAL.replace("2026-11-30", "2026-02-30")).starts_with("case.toml:4:8: `date` is \"2026-02-30\", not a calendar date"));
    assert!(error_of(&MINIMAL.replace("seed = 7", "seed = -1")).starts_with("case.toml:5:8: `seed` is -1"));
    let text = format!("{MINIMAL}\n[report]\nthresholds = [500, 50]\n");
    assert!(error_of(&text).contains("it must list positive Ne values in ascending order"));
    assert!(error_of(&MINIMAL.replace("seed = 7", "seed = \"seven\"")).contains("invalid type"));
}

#[test]
fn paths_must_stay_in_the_case_folder() {
    let text = MINIMAL.replace("g.csv", "../g.csv");
    assert!(error_of(&text).starts_with("case.toml:8:13: `genotypes` path \"../g.csv\" leaves the case folder"));
    let text = MINIMAL.replace("g.csv", "missing.csv");
    assert!(error_of(&text).starts_with("case.toml:8:13: `genotypes` file \"missing.csv\" cannot be opened"));
    let outside = tempfile::tempdir().unwrap();
    std::fs::write(outside.path().join("x.csv"), "x").unwrap();
    let dir = case_with(&MINIMAL.replace("g.csv", "link.csv"));
    #[cfg(unix)]
    std::os::unix::fs::symlink(outside.path().join("x.csv"), dir.path().join("link.csv")).unwrap();
    #[cfg(unix)]
    assert!(load_recipe(dir.path(), false).unwrap_err().to_string().contains("is a link to a file outside the case folder"));
    #[cfg(unix)]
    assert!(load_recipe(dir.path(), true).is_ok());
}

#[test]
fn missing_sections_and_recipe() {
    assert!(error_of("[assessment]\ntitle = \"T\"\nspecies = \"S\"\n").contains("missing field `data`"));
    let empty = tempfile::tempdir().unwrap();
    assert!(load_recipe(empty.path(), false).unwrap_err().to_string().contains("cannot read the recipe"));
}


#[test]
fn report_templates_are_standard_or_a_folder_in_the_case() {
    let standard = load_recipe(case_with(&format!("{MINIMAL}\n[report]\ntemplate = \"standard\"\n")).path(), false).unwrap();
    assert_eq!((standard.report.template.as_str(), standard.report.template_dir.is_none()), ("standard", true));
    let dir = case_with(&format!("{MINIMAL}\n[report]\ntemplate = \"layout\"\n"));
    let error = load_recipe(dir.path(), false).unwrap_err().to_string();
    assert!(error.starts_with("case.toml:17:12: template folder \"layout\" cannot be opened"), "{error}");
    std::fs::create_dir(dir.path().join("layout")).unwrap();
    let error = load_recipe(dir.path(), false).unwrap_err().to_string();
    assert!(error.starts_with("case.toml:17:12: template folder \"layout\" has no assessment.typ"), "{error}");
    std::fs::write(dir.path().join("layout/assessment.typ"), "Hello").unwrap();
    let recipe = load_recipe(dir.path(), false).unwrap();
    assert!(recipe.report.template_dir.unwrap().ends_with("layout"));
    let outside = format!("{MINIMAL}\n[report]\ntemplate = \"../layout\"\n");
    assert!(error_of(&outside).contains("template folder \"../layout\" leaves the case folder"));
}

/// `[report.map]`: no map unless `show = true`; a 10 km grid by default; bad values are
/// refused with the key's line and a fix.
#[test]
fn map_settings_default_to_no_map_and_a_ten_km_grid() {
    let map_of = |table: &str| {
        load_recipe(case_with(&format!("{MINIMAL}\n[report.map]\n{table}")).path(), false).unwrap().report.map
    };
    assert_eq!(load_recipe(case_with(MINIMAL).path(), false).unwrap().report.map, None);
    assert_eq!(map_of("positions = \"exact\"\n"), None, "keys without `show = true` draw no map");
    assert_eq!(map_of("show = true\n"), Some(MapPositions::Grid { cell_km: 10.0 }));
    assert_eq!(map_of("show = true\ngrid_km = 25\n"), Some(MapPositions::Grid { cell_km: 25.0 }));
    assert_eq!(map_of("show = true\npositions = \"exact\"\n"), Some(MapPositions::Exact));
    let error = |table: &str| error_of(&format!("{MINIMAL}\n[report.map]\n{table}"));
    assert_eq!(
        error("show = true\ngrid_km = 0\n"),
        "case.toml:18:11: `grid_km` is 0, but it must be a positive number of kilometres\n  help: give the width of a grid cell, for example 10 for a 10 km grid; larger cells hide the sites better"
    );
    assert!(error("grid_km = nan\n").starts_with("case.toml:17:11: `grid_km` is NaN, but it must be a positive"));
    assert!(error("grid_km = -5\n").starts_with("case.toml:17:11: `grid_km` is -5, but"));
    assert_eq!(
        error("show = true\npositions = \"rough\"\n"),
        "case.toml:18:13: `positions` is \"rough\", not one popgauge knows\n  help: write \"grid\" to show each population at the centre of its grid cell (see `grid_km`), or \"exact\" to show the positions as given"
    );
    assert_eq!(
        error("positions = \"exact\"\ngrid_km = 5\n"),
        "case.toml:18:11: `grid_km` is given, but `positions = \"exact\"` shows the positions without a grid\n  help: remove `grid_km`, or write `positions = \"grid\"` to generalise the positions to that grid"
    );
    assert_eq!(error("shw = true\n"), "case.toml:17:1: unknown key `shw`\n  help: did you mean `show`?");
    assert!(error("show = \"yes\"\n").contains("expected true or false"));
}

#[test]
fn plugin_keys_are_checked_before_anything_loads() {
    let plugin = "[[step]]\nid = \"ext\"\nuses = \"plugin:libx.so\"\n";
    let with = |extra: &str| format!("{MINIMAL}\n{plugin}{extra}");
    assert_eq!(
        error_of(&with("sha256 = \"abc\"\n")),
        "case.toml:19:10: `sha256` is \"abc\", not 64 hexadecimal digits\n  help: copy the hash that `popgauge steps --plugin libx.so` prints"
    );
    let pin = format!("sha256 = \"{}\"\n", "a".repeat(64));
    assert_eq!(
        error_of(&with(&format!("{pin}isolation = \"sandbox\"\n"))),
        "case.toml:20:13: `isolation` is \"sandbox\"\n  help: write \"process\" (default: crashes and hangs fail only this step) or \"in-process\" (faster)"
    );
    assert_eq!(
        error_of(&with(&format!("{pin}timeout_seconds = 0\n"))),
        "case.toml:20:19: `timeout_seconds` is 0, but it must be a whole number of seconds from 1 to 86400\n  help: for example 600 (ten minutes, the default)"
    );
    assert_eq!(
        error_of(&format!("{MINIMAL}\n[[step]]\nid = \"ext\"\nuses = \"plugin:../libx.so\"\n{pin}")),
        "case.toml:18:8: plugin path \"../libx.so\" leaves the case folder\n  help: copy the library into the case folder, or run with --allow-outside if this is intended"
    );
}

#[test]
fn plugin_keys_are_refused_on_built_in_steps() {
    assert_eq!(
        error_of(&MINIMAL.replace("uses = \"validate\"\n", "uses = \"validate\"\nisolation = \"process\"\n")),
        "case.toml:13:13: `isolation` applies to external plugin steps; built-in steps run in popgauge\n  help: remove the `isolation` line"
    );
    assert_eq!(
        error_of(&MINIMAL.replace("uses = \"validate\"\n", "uses = \"validate\"\ntimeout_seconds = 5\n")),
        "case.toml:13:19: `timeout_seconds` applies to external plugin steps only\n  help: remove the `timeout_seconds` line"
    );
}

/// A recipe that is not UTF-8 is refused with its line, and type names are plain.
#[test]
fn encoding_and_type_messages_name_the_place() {
    let err = decode_recipe(b"[assessment]\ntitle = \"caf\xe9\"\n").unwrap_err();
    assert_eq!(err.to_string(), "case.toml:2: the recipe is not valid UTF-8 text\n  help: save case.toml as UTF-8 (most editors offer it under \"Save as… / Encoding\")");
    assert!(decode_recipe(&vec![b' '; MAX_RECIPE_BYTES + 1]).unwrap_err().to_string().contains("at most 1048576 bytes"));
    let err = error_of(&MINIMAL.replace("seed = 7", "seed = \"seven\""));
    assert!(err.starts_with("case.toml:5:8: invalid type: string \"seven\", expected a whole number\n"), "{err}");
}

mod properties {
    //! Any recipe text gives a recipe or a clean error (a message with a `help:` line).
    use proptest::prelude::*;

    use super::*;

    /// A refusal names the recipe (or the file it points at) on its first line and has a help
    /// line (the error convention: errors name the file and say how to fix them).
    fn clean<T>(result: Result<T, RecipeError>) -> Result<(), TestCaseError> {
        if let Err(e) = result {
            let text = e.to_string();
            let first = text.lines().next().unwrap_or_default();
            prop_assert!(first.contains("case.toml") || first.contains(".csv"), "no file: {}", text);
            prop_assert!(text.contains("\n  help: "), "no help line: {}", text);
        }
        Ok(())
    }

    proptest! {
        #[test]
        fn any_bytes(bytes in proptest::collection::vec(any::<u8>(), 0..300)) {
            match decode_recipe(&bytes) {
                Ok(text) => clean(parse(&text))?,
                Err(e) => clean::<()>(Err(e))?,
            }
        }

        /// Lines of the minimal recipe with one replaced by TOML-like text, through the full
        /// loader (paths, steps, parameters).
        #[test]
        fn recipe_like_text(line in 0..14usize, replacement in "[a-z_\\[\\]=\" .0-9/:-]{0,40}") {
            let mut lines: Vec<&str> = MINIMAL.lines().collect();
            lines[line] = &replacement;
            let dir = case_with(&lines.join("\n"));
            clean(load_recipe(dir.path(), false))?;
        }
    }
}
