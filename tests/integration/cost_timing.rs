//! Timings of inputs whose cost once grew faster than their size: a table on
//! the last of many sheets and a folder settings file of many keys. Ignored
//! in the suite (timings are not tests on a shared machine); run with
//! `cargo test -p tests --test integration -- --ignored cost_timing --nocapture`.
//! Each prints its seconds at two sizes four times apart; a linear cost
//! takes about four times as long at the larger size.

use std::time::{Duration, Instant};

use crate::common::{long_rows, put_rows, temp_folder, trialyst, write_rows};

fn seconds(run: impl FnOnce()) -> Duration {
    let started = Instant::now();
    run();
    started.elapsed()
}

#[test]
#[ignore = "timing; run by hand"]
fn a_table_on_the_last_of_many_sheets() {
    let folder = temp_folder();
    let mut times = Vec::new();
    for sheets in [1_000_u32, 4_000] {
        let path = folder.path().join(format!("memos {sheets}.xlsx"));
        let mut book = rust_xlsxwriter::Workbook::new();
        for index in 1..sheets {
            let sheet = book.add_worksheet();
            sheet.set_name(format!("Memo {index}")).expect("named");
            sheet.write_string(0, 0, "memo").expect("written");
        }
        let sheet = book.add_worksheet();
        sheet.set_name("Runs").expect("named");
        put_rows(
            sheet,
            &long_rows(
                "Kiln",
                "Density (g/cm3)",
                &[("east", &[2.1, 2.2, 2.0]), ("west", &[2.4, 2.3, 2.5])],
            ),
        );
        book.save(&path).expect("saved");
        let name = path
            .file_name()
            .and_then(|name| name.to_str())
            .unwrap_or_default()
            .to_string();
        let took = seconds(|| {
            trialyst(folder.path(), &["run", &name, "--json", "--no-write"]).expect_code(0);
        });
        println!("{sheets} sheets: {:.2} s", took.as_secs_f64());
        times.push(took);
    }
    assert!(times[1] < times[0] * 10, "{times:?}");
}

#[test]
#[ignore = "timing; run by hand"]
fn a_folder_settings_file_of_many_keys() {
    let mut times = Vec::new();
    for keys in [25_000_usize, 100_000] {
        let folder = temp_folder();
        write_rows(
            &folder.path().join("plain.xlsx"),
            "Runs",
            &long_rows(
                "Kiln",
                "Density (g/cm3)",
                &[("east", &[2.1, 2.2, 2.0]), ("west", &[2.4, 2.3, 2.5])],
            ),
        );
        let text: String = (0..keys)
            .map(|index| format!("note_{index:06} = \"{index}\"\n"))
            .collect();
        std::fs::write(folder.path().join("trialyst.toml"), text).expect("written");
        let took = seconds(|| {
            trialyst(folder.path(), &["run", "plain.xlsx", "--json", "--no-write"]);
        });
        println!("{keys} keys: {:.2} s", took.as_secs_f64());
        times.push(took);
    }
    assert!(times[1] < times[0] * 10, "{times:?}");
}
