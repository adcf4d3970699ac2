//! Crash safety of saving and no surprise writes: a save killed midway leaves
//! the old file whole, a full disk and paths that are not files are reported
//! with nothing lost, and no string in a session is ever taken as a place to
//! write.

use phasewright::session::{self, Parameter, SeededOrbit, Session, save_atomic};
use std::path::{Path, PathBuf};
use std::process::Command;
use std::time::Duration;

/// Set in a child process: the path it saves to in a loop until killed.
const SAVE_LOOP_ENV: &str = "PHASEWRIGHT_TEST_SAVE_LOOP";
/// Set in a child process that runs under a file-size limit.
const SIZE_LIMIT_ENV: &str = "PHASEWRIGHT_TEST_SIZE_LIMIT";

/// A valid session whose notes make the file about `kib` KiB long.
fn session(tag: &str, kib: usize) -> Session {
    let (mut s, _) = Session::from_formula("p^2/2 + a*q^2/2").expect("compiles");
    s.title = tag.to_string();
    s.notes = format!("{tag} ").repeat(kib * 1024 / (tag.len() + 1));
    s
}

#[test]
fn a_save_killed_midway_leaves_a_whole_file() {
    if let Some(path) = std::env::var_os(SAVE_LOOP_ENV) {
        // the child: save two versions in turn until killed
        let path = PathBuf::from(path);
        let versions = [session("first", 2048), session("second", 3072)];
        for k in 0.. {
            let _ = save_atomic(&path, &versions[k % 2]);
        }
    }
    let dir = tempfile::tempdir().expect("temp dir");
    let path = dir.path().join("s.json");
    let first = session("first", 2048);
    let second = session("second", 3072);
    save_atomic(&path, &first).expect("first save");
    let exe = std::env::current_exe().expect("test binary");
    let mut seen_second = false;
    for round in 0..12u64 {
        let mut child = Command::new(&exe)
            .args([
                "--exact",
                "a_save_killed_midway_leaves_a_whole_file",
                "--nocapture",
            ])
            .env(SAVE_LOOP_ENV, &path)
            .spawn()
            .expect("child starts");
        std::thread::sleep(Duration::from_millis(40 + 23 * round));
        child.kill().expect("kill");
        let _ = child.wait();
        let (back, _) = session::load_file(&path)
            .unwrap_or_else(|e| panic!("round {round}: the file is broken: {e}"));
        assert!(
            back == first || back == second,
            "round {round}: neither version"
        );
        seen_second |= back == second;
    }
    // the child got far enough to replace the file at least once
    assert!(seen_second, "no save completed before a kill");
}

#[test]
fn a_full_disk_is_reported_and_the_old_file_kept() {
    if let Some(path) = std::env::var_os(SIZE_LIMIT_ENV) {
        // the child, under `ulimit -f`: a large save fails, a small file stays
        let path = PathBuf::from(path);
        let before = std::fs::read(&path).expect("old file");
        let big = session("big", 8192);
        let err = save_atomic(&path, &big).expect_err("the size limit stops the save");
        let text = err.to_string();
        assert!(
            text.starts_with(&format!("cannot save {}: ", path.display())),
            "{text}"
        );
        assert!(text.contains("File too large"), "{text}");
        assert_eq!(std::fs::read(&path).expect("old file"), before);
        // no temporary file is left beside it
        let dir = path.parent().expect("folder");
        assert_eq!(std::fs::read_dir(dir).expect("dir").count(), 1);
        println!("CHILD-OK {text}");
        return;
    }
    let dir = tempfile::tempdir().expect("temp dir");
    let path = dir.path().join("s.json");
    save_atomic(&path, &session("small", 1)).expect("small save");
    let exe = std::env::current_exe().expect("test binary");
    // 1024 blocks: 512 KiB or 1 MiB depending on the shell's block size, both
    // far below the 8 MiB save; SIGXFSZ ignored so that the write fails with EFBIG
    let script = "trap '' XFSZ; ulimit -f 1024; exec \"$0\" --exact \
                  a_full_disk_is_reported_and_the_old_file_kept --nocapture";
    let out = Command::new("sh")
        .args(["-c", script])
        .arg(&exe)
        .env(SIZE_LIMIT_ENV, &path)
        .output()
        .expect("sh runs");
    let stdout = String::from_utf8_lossy(&out.stdout);
    assert!(
        out.status.success() && stdout.contains("CHILD-OK cannot save"),
        "child failed: {stdout}\n{}",
        String::from_utf8_lossy(&out.stderr)
    );
}

#[test]
fn paths_that_are_not_files_are_refused_and_left_alone() {
    let dir = tempfile::tempdir().expect("temp dir");
    let s = session("x", 1);
    // a pipe: renaming over it would replace it
    let fifo = dir.path().join("pipe");
    let made = Command::new("mkfifo").arg(&fifo).status();
    if made.is_ok_and(|st| st.success()) {
        let e = save_atomic(&fifo, &s).expect_err("a pipe is not a file");
        assert_eq!(
            e.to_string(),
            format!(
                "cannot save {}: the path names a folder, device or pipe, not a file; choose a \
                 file name",
                fifo.display()
            )
        );
        use std::os::unix::fs::FileTypeExt;
        assert!(
            std::fs::metadata(&fifo)
                .expect("still there")
                .file_type()
                .is_fifo()
        );
    }
    // inside a file, as if it were a folder
    let file = dir.path().join("plain.txt");
    std::fs::write(&file, b"keep").expect("write");
    let e = save_atomic(&file.join("s.json"), &s).expect_err("not a folder");
    assert!(e.to_string().contains("plain.txt/s.json"), "{e}");
    assert_eq!(std::fs::read(&file).expect("read"), b"keep");
    // a read-only file system (procfs refuses new files, even to root)
    let e = save_atomic(Path::new("/proc/phasewright-session.json"), &s).expect_err("read-only");
    assert!(
        e.to_string()
            .starts_with("cannot save /proc/phasewright-session.json: "),
        "{e}"
    );
    assert!(!Path::new("/proc/phasewright-session.json").exists());
}

/// Every file under `dir`, recursively.
fn files_under(dir: &Path, out: &mut Vec<PathBuf>) {
    if let Ok(entries) = std::fs::read_dir(dir) {
        for e in entries.flatten() {
            let p = e.path();
            if p.is_dir() {
                files_under(&p, out);
            } else {
                out.push(p);
            }
        }
    }
}

#[test]
fn path_like_strings_in_a_session_are_never_written_to() {
    // Every string field holds a path (relative, absolute, into the folder the
    // session is saved in); loading, analysing and saving write the chosen file
    // and nothing else.
    let dir = tempfile::tempdir().expect("temp dir");
    let work = dir.path().join("work");
    std::fs::create_dir(&work).expect("mkdir");
    let target = work.join("chosen.json");
    let bait = |name: &str| dir.path().join(name).display().to_string();
    let mut s = Session::blank("p^2/2 + q^2/2");
    s.title = bait("title.json");
    s.notes = format!(
        "{} ../notes.json ~/notes.json file:///tmp/x",
        bait("notes.json")
    );
    s.parameters.push(Parameter {
        name: "unused".into(),
        value: 0.0,
        min: -1.0,
        max: 1.0,
        step: None,
    });
    s.orbits.push(SeededOrbit {
        q0: 0.5,
        p0: 0.0,
        duration: 1.0,
        method: "auto".into(),
        colour: None,
    });
    // a parameter named like a path loads (unused, with a warning); a method
    // named like one is refused; neither is followed
    let mut text = s.to_json_pretty().replacen(
        "\"name\": \"unused\"",
        &format!("\"name\": {:?}", bait("name.json")),
        1,
    );
    let attempt = text.replacen(
        "\"method\": \"auto\"",
        &format!("\"method\": {:?}", bait("method.json")),
        1,
    );
    let e = session::load(&attempt).expect_err("no such method");
    assert_eq!(e.field, "orbits[0].method");
    text = text.replacen(
        "\"title\"",
        &format!("\"output\": {:?}, \"title\"", bait("output.json")),
        1,
    );
    let (loaded, warnings) = session::load(&text).expect("loads");
    assert!(
        warnings
            .iter()
            .any(|w| w.starts_with("output: unknown field")),
        "{warnings:?}"
    );
    let sys = loaded.system().expect("system");
    let _ = phasewright::render::portrait_data(
        &loaded,
        &sys,
        &loaded.view,
        &phasewright::core::Cancel::never(),
    );
    save_atomic(&target, &loaded).expect("saves");
    let mut written = Vec::new();
    files_under(dir.path(), &mut written);
    assert_eq!(written, vec![target.clone()]);
    assert_eq!(session::load_file(&target).expect("reloads").0, loaded);
}
