//! The formula language: parsing, symbolic derivatives and compilation to a [`tape::Tape`].

pub mod tape;
