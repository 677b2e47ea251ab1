//! Model files: PNML (ISO/IEC 15909-2) for Petri nets and BPMN 2.0 export of process trees.
/// BPMN 2.0 export.
pub mod bpmn;
/// PNML read and write.
pub mod pnml;
