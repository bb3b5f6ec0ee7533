//! `trialyst inspect`: the table that would be analysed and every finding, without analysing.

use service::error_chain;
use service::AnalysisRequest;

use super::args::{table_settings, InspectArgs};
use super::{EXIT_OK, EXIT_SOME_FAILED, EXIT_USAGE};

/// `trialyst inspect`: prints the table found and its findings; returns the exit code.
pub(crate) fn inspect_command(args: InspectArgs) -> i32 {
    let settings = match table_settings(&args.table) {
        Ok(settings) => settings,
        Err(error) => {
            eprintln!("trialyst: {error}");
            return EXIT_USAGE;
        }
    };
    let request = AnalysisRequest {
        settings,
        ..AnalysisRequest::default()
    };
    match service::inspect_workbook(&args.file, &request) {
        Ok(inspection) => {
            if args.json {
                println!("{}", serde_json::to_string(&inspection).unwrap_or_default());
            } else {
                let table = &inspection.table;
                println!(
                    "{} ({}, {} bytes)",
                    inspection.source.file_name, inspection.source.format, inspection.source.bytes
                );
                println!(
                    "table: sheet '{}', cells {}, {:?} layout, {} records",
                    table.sheet, table.range, table.layout, table.n_records
                );
                for factor in &table.factors {
                    println!(
                        "  {} '{}'{}: {} levels: {}",
                        if factor.is_block { "block" } else { "factor" },
                        factor.name,
                        factor
                            .column
                            .as_ref()
                            .map(|column| format!(" (column {column})"))
                            .unwrap_or_default(),
                        factor.levels.len(),
                        factor.levels.join(", ")
                    );
                }
                println!("  responses: {}", table.responses.join(", "));
                for choice in &table.choices {
                    println!("  chosen: {choice}");
                }
                println!("findings: {}", inspection.findings.len());
                for finding in &inspection.findings {
                    println!("  {}: {}", finding.place(), finding.message);
                }
            }
            EXIT_OK
        }
        Err(error) => {
            eprintln!("trialyst: {}", error_chain(&error));
            EXIT_SOME_FAILED
        }
    }
}
