//! Printing that never panics. `println!` and `eprintln!` panic when their stream is a closed
//! pipe (`nevermet check study.toml 2>&1 | head -3`); a closed terminal or pipe is the reader's
//! choice, not a failure, so these write what they can and drop the rest, and the command still
//! ends with the exit code its work earned (0 ok, 1 replay differs, 2 failure).

use std::fmt;
use std::io::Write;

/// A line on stdout; a closed stdout is ignored.
pub fn out_line(args: fmt::Arguments) {
    let _ = writeln!(std::io::stdout().lock(), "{args}");
}

/// Text on stdout without a newline; a closed stdout is ignored.
pub fn out_text(args: fmt::Arguments) {
    let _ = write!(std::io::stdout().lock(), "{args}");
}

/// A line on stderr; a closed stderr is ignored.
pub fn err_line(args: fmt::Arguments) {
    let _ = writeln!(std::io::stderr().lock(), "{args}");
}

/// Text on stderr without a newline; a closed stderr is ignored.
pub fn err_text(args: fmt::Arguments) {
    let _ = write!(std::io::stderr().lock(), "{args}");
}

/// `println!` that never panics.
#[macro_export]
macro_rules! outln {
    () => { $crate::console::out_line(format_args!("")) };
    ($($arg:tt)*) => { $crate::console::out_line(format_args!($($arg)*)) };
}

/// `print!` that never panics.
#[macro_export]
macro_rules! out {
    ($($arg:tt)*) => { $crate::console::out_text(format_args!($($arg)*)) };
}

/// `eprintln!` that never panics.
#[macro_export]
macro_rules! errln {
    () => { $crate::console::err_line(format_args!("")) };
    ($($arg:tt)*) => { $crate::console::err_line(format_args!($($arg)*)) };
}

/// `eprint!` that never panics.
#[macro_export]
macro_rules! err {
    ($($arg:tt)*) => { $crate::console::err_text(format_args!($($arg)*)) };
}
