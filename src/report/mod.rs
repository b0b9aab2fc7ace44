//! Pictures and reports: log-log density charts ([`chart`], used by `budget`) and an
//! analysis's pictures with its self-contained HTML report ([`figure`]).

pub mod chart;
pub mod figure;
