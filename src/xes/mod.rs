//! IEEE 1849 XES (eXtensible Event Stream): read and write event logs.
//!
//! XES is the IEEE standard XML format for event logs (IEEE Std 1849-2016, revised as
//! IEEE 1849-2023). A `log` holds `trace`s (cases), a trace holds `event`s, and logs, traces
//! and events carry typed attributes (`string`, `date`, `int`, `float`, `boolean`, `id`, `list`)
//! whose keys are qualified by `extension` prefixes: `concept:name` names a trace (the case
//! label) or an event (the activity), `time:timestamp` dates an event, `org:resource` and
//! `lifecycle:transition` give who did it and which step of its lifecycle it was.
//!
//! * [`read_xes`] streams a document (plain or gzip) into a [`crate::log::LogInput`] plus the
//!   log-level [`XesMeta`] and a [`XesReport`]; see [`read`] for what each construct becomes,
//!   how nested attributes are flattened into dotted keys, and how hostile input is refused.
//! * [`write_xes`] writes an [`crate::log::EventLog`] as an XES 2016 document; reading it back
//!   gives the same log (labels, activities, exact timestamps, resources, lifecycle, typed
//!   attributes and nulls).
//! * [`time`] converts `xs:dateTime` text to and from `i64` nanoseconds (UTC).
//!
//! ```
//! use tracemill::xes::{read_xes_bytes, write_xes, XesWriteOptions};
//! use tracemill::log::EventLog;
//! let doc = br#"<?xml version="1.0" encoding="UTF-8"?>
//! <log xes.version="1849-2016" xmlns="http://www.xes-standard.org/">
//!   <trace><string key="concept:name" value="bike-17"/>
//!     <event><string key="concept:name" value="inspect frame"/>
//!            <date key="time:timestamp" value="2024-05-02T09:30:00+02:00"/></event>
//!   </trace>
//! </log>"#;
//! let x = read_xes_bytes(doc).unwrap();
//! let (log, _) = EventLog::build(x.input).unwrap();
//! assert_eq!(log.case_name(0), "bike-17");
//! let mut out = Vec::new();
//! write_xes(&log, &mut out, &XesWriteOptions::default()).unwrap();
//! let again = read_xes_bytes(&out).unwrap();
//! assert_eq!(again.input.time, vec![1_714_635_000_000_000_000]);
//! ```
//!
//! Reference: IEEE Std 1849-2016, *IEEE Standard for eXtensible Event Stream (XES) for
//! Achieving Interoperability in Event Logs and Event Streams*; IEEE Std 1849-2023.

mod columns;
mod input;
pub mod read;
pub mod time;
pub mod write;

pub use read::{
    read_xes, read_xes_bytes, read_xes_log, read_xes_path, read_xes_path_with, MissingCaseLabel,
    XesClassifier, XesExtension, XesGlobal, XesLog, XesMeta, XesReadOptions, XesReport, XesScope,
    XesType, XesValue, KEY_LIFECYCLE, KEY_NAME, KEY_RESOURCE, KEY_TIME,
};
pub use time::{civil_from_days, days_from_civil, format_ns, parse_datetime};
pub use write::{write_xes, write_xes_path, write_xes_path_with, XesWriteOptions};
