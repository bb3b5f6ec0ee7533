//! Table-driven tests of table detection on grids built in memory.
