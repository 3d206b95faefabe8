//! The `rolloff` command: parses arguments, calls the library, formats results.

fn main() {}
