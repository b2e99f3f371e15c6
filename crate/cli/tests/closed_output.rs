//! The command line stops quietly when its reader goes away (`forefield info F | head`), as
//! command-line tools do (common practice, no source): exit status 0, no panic message.

use std::process::{Command, Stdio};

#[test]
fn a_closed_pipe_ends_the_program_quietly() {
    let mut child = Command::new(env!("CARGO_BIN_EXE_forefield"))
        .arg("help")
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .expect("the binary starts");
    // Close the read end before the program has started writing.
    drop(child.stdout.take());
    let output = child.wait_with_output().expect("the program ends");
    let stderr = String::from_utf8_lossy(&output.stderr);
    assert!(
        output.status.success(),
        "status {:?}: {stderr}",
        output.status
    );
    assert!(!stderr.contains("panicked"), "{stderr}");
}
