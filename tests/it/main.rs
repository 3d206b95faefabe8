//! Integration tests of the whole pipeline against references outside the project.

mod reference;
