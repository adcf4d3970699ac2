//! phasewright: a workbench for conservative one-degree-of-freedom Hamiltonian
//! systems H(q, p). The core computes; the session module holds the file
//! format; the command line and the desktop explorer are thin clients.
pub mod cli;
pub mod core;
#[cfg(feature = "gui")]
pub mod gui;
pub mod numbers;
pub mod render;
pub mod request;
pub mod scene;
pub mod session;
