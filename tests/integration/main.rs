//! Integration tests of trialyst, one module per area.

mod lsp;
