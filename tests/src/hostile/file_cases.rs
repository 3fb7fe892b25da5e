//! Hostile folders and files: missing, of the wrong kind, or traps that
//! would block or never end (named pipes, devices).

use super::edit::*;
use super::{Case, Category, Input};
use std::path::Path;

pub(super) fn files(scratch: &Path) -> Vec<Case> {
    use Category::Files as C;
    let mut all = Vec::new();

    let missing = scratch.join("no-such-package");
    let _ = std::fs::remove_dir_all(&missing);
    all.push(Case {
        name: "folder that does not exist",
        category: C,
        input: Input::Folder(missing),
        expect: refused("FolderUnreadable", &["no-such-package", "cannot be read"]),
    });

    let empty = scratch.join("empty-package");
    let _ = std::fs::remove_dir_all(&empty);
    std::fs::create_dir_all(&empty).expect("make an empty folder");
    all.push(Case {
        name: "empty folder",
        category: C,
        input: Input::Folder(empty),
        expect: refused("MissingFile", &["manifest.json"]),
    });

    let latin1 = package_folder(scratch, "latin1-manifest");
    let mut text = std::fs::read(latin1.join("manifest.json")).unwrap();
    let at = text.windows(5).position(|w| w == b"known").unwrap();
    text[at] = 0xe9; // "é" in Latin-1, invalid alone in UTF-8
    std::fs::write(latin1.join("manifest.json"), text).unwrap();
    all.push(Case {
        name: "manifest saved in Latin-1, not UTF-8",
        category: C,
        input: Input::Folder(latin1),
        expect: refused("ManifestSyntax", &["manifest.json", "UTF-8"]),
    });

    let dir_manifest = package_folder(scratch, "manifest-is-a-folder");
    std::fs::remove_file(dir_manifest.join("manifest.json")).unwrap();
    std::fs::create_dir(dir_manifest.join("manifest.json")).unwrap();
    all.push(Case {
        name: "manifest.json is a folder",
        category: C,
        input: Input::Folder(dir_manifest),
        expect: refused("FolderUnreadable", &["manifest.json", "folder"]),
    });

    let dir_encoder = package_folder(scratch, "encoder-is-a-folder");
    std::fs::remove_file(dir_encoder.join("encoder.onnx")).unwrap();
    std::fs::create_dir(dir_encoder.join("encoder.onnx")).unwrap();
    all.push(Case {
        name: "encoder.onnx is a folder",
        category: C,
        input: Input::Folder(dir_encoder),
        expect: refused("FolderUnreadable", &["encoder.onnx", "folder"]),
    });

    #[cfg(unix)]
    {
        let dangling = package_folder(scratch, "dangling-link");
        std::fs::remove_file(dangling.join("decoder.onnx")).unwrap();
        std::os::unix::fs::symlink("moved-away/decoder.onnx", dangling.join("decoder.onnx"))
            .unwrap();
        all.push(Case {
            name: "decoder.onnx is a dangling symlink",
            category: C,
            input: Input::Folder(dangling),
            expect: refused(
                "FolderUnreadable",
                &["decoder.onnx", "link", "no longer exists"],
            ),
        });

        // A named pipe: opening it for reading blocks until a writer
        // appears, so a loader that opens it hangs the worker for good.
        let fifo = package_folder(scratch, "fifo-encoder");
        std::fs::remove_file(fifo.join("encoder.onnx")).unwrap();
        let made = std::process::Command::new("mkfifo")
            .arg(fifo.join("encoder.onnx"))
            .status()
            .expect("run mkfifo");
        assert!(made.success(), "mkfifo failed");
        all.push(Case {
            name: "encoder.onnx is a named pipe (FIFO)",
            category: C,
            input: Input::Folder(fifo),
            expect: refused("FolderUnreadable", &["encoder.onnx", "not a regular file"]),
        });

        let device = package_folder(scratch, "device-decoder");
        std::fs::remove_file(device.join("decoder.onnx")).unwrap();
        std::os::unix::fs::symlink("/dev/zero", device.join("decoder.onnx")).unwrap();
        all.push(Case {
            name: "decoder.onnx links to /dev/zero (endless device)",
            category: C,
            input: Input::Folder(device),
            expect: refused("FolderUnreadable", &["decoder.onnx", "not a regular file"]),
        });
    }
    all
}
