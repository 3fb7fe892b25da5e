//! The editor window, opened by the CLAP host harness in a real X11 window
//! (Xvfb, rendered by Mesa in software), looked at and clicked.
//!
//! The harness embeds the editor in a parent window of its own (CLAP
//! `ext/gui.h`: `create`, `set_parent`, `show`), captures a bar through the
//! host, and then works the editor with the mouse through the X server's
//! XTEST extension as a composer would: click a take to select it, press its
//! Keep button. After each step it grabs the window's pixels and checks what
//! is on screen against the editor's palette (`nudgebar::editor::theme`):
//! the prompt's piano roll has notes, every take has a roll with notes, the
//! selected take is outlined, the kept one marked, and text is drawn. The
//! grabs are written to `target/editor-screenshots/` as PNG files.
//!
//! Without a display, the test starts Xvfb on a free display number. If
//! Xvfb is not installed it skips with a loud message, unless
//! `NUDGEBAR_REQUIRE_GUI` is set (CI sets it), in which case it fails.

mod plugin_support;

use nudgebar::editor::theme;
use nudgebar_music::TimeSignature;
use nudgebar_tests::host::{HostTransport, Session};
use plugin_support::*;
use std::path::{Path, PathBuf};
use std::process::{Child, Command, Stdio};
use std::time::{Duration, Instant};
use x11rb::connection::Connection;
use x11rb::protocol::xproto::{
    ConfigureWindowAux, ConnectionExt as _, CreateWindowAux, ImageFormat, WindowClass,
    BUTTON_PRESS_EVENT, BUTTON_RELEASE_EVENT, MOTION_NOTIFY_EVENT,
};
use x11rb::protocol::xtest::ConnectionExt as _;
use x11rb::rust_connection::RustConnection;

/// How long to wait for the window to show what a step should have changed.
const SCREEN_TIMEOUT: Duration = Duration::from_secs(60);

// ----- the X server -----

/// An Xvfb server this test started, with a watchdog shell that stops it
/// (SIGTERM, by its process id) once this test process has exited. It is not
/// stopped earlier: the editor's window library and the GL driver may keep X
/// connections open until the process exits, and Xlib ends a process whose
/// server vanishes under it.
struct Xvfb {
    _watchdog: Child,
}

/// The display to use: `$DISPLAY` if set, else a fresh Xvfb. `None` means
/// skip (no Xvfb and the GUI is not required).
fn display() -> Option<(String, Option<Xvfb>)> {
    if let Some(d) = std::env::var_os("DISPLAY").filter(|d| !d.is_empty()) {
        return Some((d.to_string_lossy().into_owned(), None));
    }
    let required = std::env::var_os("NUDGEBAR_REQUIRE_GUI").is_some();
    let installed = Command::new("Xvfb")
        .arg("-help")
        .stdout(Stdio::null())
        .stderr(Stdio::null())
        .status()
        .is_ok();
    if !installed {
        let why = "Xvfb is not installed and no DISPLAY is set, so the editor cannot be opened. \
                   Install it (Debian: apt-get install xvfb; `.ci/run` does this).";
        if required {
            panic!("{why} NUDGEBAR_REQUIRE_GUI is set, so this is a failure.");
        }
        eprintln!("\n!!!!!!!!\n!!! SKIPPED editor screenshot test: {why}\n!!!!!!!!\n");
        return None;
    }
    // Xvfb picks a free display number itself and writes it to the given
    // file descriptor (our pipe on its stdout) once it accepts clients; no
    // guessing, no race with other servers. `-noreset`: the server must not
    // reset when the last client of the moment disconnects.
    let script = format!(
        "Xvfb -displayfd 1 -screen 0 1280x800x24 -nolisten tcp -noreset & x=$!; \
         while kill -0 {} 2>/dev/null; do sleep 1; done; kill -TERM $x",
        std::process::id()
    );
    let mut child = Command::new("sh")
        .args(["-c", &script])
        .stdout(Stdio::piped())
        .stderr(Stdio::null())
        .spawn()
        .expect("Xvfb starts");
    let mut number = String::new();
    let stdout = child.stdout.take().expect("piped stdout");
    std::io::BufRead::read_line(&mut std::io::BufReader::new(stdout), &mut number)
        .expect("Xvfb reports its display number");
    let number = number.trim();
    assert!(
        !number.is_empty() && number.chars().all(|c| c.is_ascii_digit()),
        "Xvfb did not report a display number (got {number:?})"
    );
    Some((format!(":{number}"), Some(Xvfb { _watchdog: child })))
}

// ----- pictures -----

/// An RGB picture of the window.
struct Shot {
    width: usize,
    height: usize,
    rgb: Vec<[u8; 3]>,
}

/// A rectangle in pixels, half-open.
#[derive(Debug, Clone, Copy, PartialEq)]
struct Area {
    x0: usize,
    y0: usize,
    x1: usize,
    y1: usize,
}

impl Area {
    fn width(&self) -> usize {
        self.x1 - self.x0
    }
    fn height(&self) -> usize {
        self.y1 - self.y0
    }
    fn centre(&self) -> (i16, i16) {
        (
            ((self.x0 + self.x1) / 2) as i16,
            ((self.y0 + self.y1) / 2) as i16,
        )
    }
}

/// A theme colour as RGB bytes.
macro_rules! rgb {
    ($c:expr) => {{
        let c = $c;
        [c.r(), c.g(), c.b()]
    }};
}

/// Within `tol` per channel: the inside of a filled shape is drawn in its
/// exact colour; a little room covers rounding in the software renderer.
fn near(p: [u8; 3], c: [u8; 3], tol: u8) -> bool {
    p.iter().zip(c).all(|(a, b)| a.abs_diff(b) <= tol)
}

impl Shot {
    fn grab(conn: &RustConnection, window: u32, width: u16, height: u16) -> Shot {
        let reply = conn
            .get_image(ImageFormat::Z_PIXMAP, window, 0, 0, width, height, !0)
            .expect("GetImage request")
            .reply()
            .expect("GetImage reply");
        let bpp = conn
            .setup()
            .pixmap_formats
            .iter()
            .find(|f| f.depth == reply.depth)
            .map(|f| f.bits_per_pixel)
            .expect("a pixmap format for the window's depth");
        assert_eq!(bpp, 32, "Xvfb at depth 24 stores 32 bits per pixel");
        // Z-pixmap, 32 bits per pixel, least significant byte first: B G R X.
        let rgb = reply
            .data
            .chunks_exact(4)
            .map(|p| [p[2], p[1], p[0]])
            .collect();
        Shot {
            width: width as usize,
            height: height as usize,
            rgb,
        }
    }

    fn at(&self, x: usize, y: usize) -> [u8; 3] {
        self.rgb[y * self.width + x]
    }

    fn whole(&self) -> Area {
        Area {
            x0: 0,
            y0: 0,
            x1: self.width,
            y1: self.height,
        }
    }

    fn count(&self, area: Area, pred: impl Fn([u8; 3]) -> bool) -> usize {
        let mut n = 0;
        for y in area.y0..area.y1.min(self.height) {
            for x in area.x0..area.x1.min(self.width) {
                if pred(self.at(x, y)) {
                    n += 1;
                }
            }
        }
        n
    }

    /// Areas painted in any of `colours`, grouped by proximity: pixels
    /// within one 4×4 cell of each other belong together. Piano rolls are
    /// found this way: their two row colours (white and black keys) are
    /// theirs alone, and the lines and notes drawn over them leave no gap
    /// wider than a cell.
    fn regions(&self, colours: &[[u8; 3]]) -> Vec<Area> {
        const CELL: usize = 4;
        let (cw, ch) = (self.width.div_ceil(CELL), self.height.div_ceil(CELL));
        let mut marked = vec![false; cw * ch];
        for y in 0..self.height {
            for x in 0..self.width {
                if colours.contains(&self.at(x, y)) {
                    marked[(y / CELL) * cw + x / CELL] = true;
                }
            }
        }
        let mut seen = vec![false; cw * ch];
        let mut out = Vec::new();
        for start in 0..marked.len() {
            if !marked[start] || seen[start] {
                continue;
            }
            let mut stack = vec![start];
            seen[start] = true;
            let (mut x0, mut y0, mut x1, mut y1) = (usize::MAX, usize::MAX, 0, 0);
            while let Some(c) = stack.pop() {
                let (cx, cy) = (c % cw, c / cw);
                x0 = x0.min(cx);
                y0 = y0.min(cy);
                x1 = x1.max(cx + 1);
                y1 = y1.max(cy + 1);
                for dy in -1i64..=1 {
                    for dx in -1i64..=1 {
                        let (nx, ny) = (cx as i64 + dx, cy as i64 + dy);
                        if nx < 0 || ny < 0 || nx >= cw as i64 || ny >= ch as i64 {
                            continue;
                        }
                        let n = ny as usize * cw + nx as usize;
                        if marked[n] && !seen[n] {
                            seen[n] = true;
                            stack.push(n);
                        }
                    }
                }
            }
            out.push(Area {
                x0: x0 * CELL,
                y0: y0 * CELL,
                x1: (x1 * CELL).min(self.width),
                y1: (y1 * CELL).min(self.height),
            });
        }
        out
    }

    fn save_png(&self, path: &Path) {
        std::fs::create_dir_all(path.parent().unwrap()).unwrap();
        let file = std::fs::File::create(path).unwrap();
        let mut encoder = png::Encoder::new(
            std::io::BufWriter::new(file),
            self.width as u32,
            self.height as u32,
        );
        encoder.set_color(png::ColorType::Rgb);
        encoder.set_depth(png::BitDepth::Eight);
        encoder.set_compression(png::Compression::High);
        let mut writer = encoder.write_header().unwrap();
        writer.write_image_data(self.rgb.as_flattened()).unwrap();
    }
}

/// The piano rolls on screen: the prompt's (left column) and the takes'
/// (right column, in reading order).
struct Rolls {
    prompt: Option<Area>,
    takes: Vec<Area>,
}

fn rolls(shot: &Shot) -> Rolls {
    let mut found: Vec<Area> = shot
        .regions(&[rgb!(theme::ROLL), rgb!(theme::ROLL_BLACK_KEY)])
        .into_iter()
        .filter(|a| a.width() >= 100 && a.height() >= 40)
        .collect();
    found.sort_by_key(|a| (a.y0 / 20, a.x0));
    // The left column ends 10 + 300 points in (window margin + its width).
    let left = 316;
    Rolls {
        prompt: found.iter().copied().find(|a| a.x1 <= left),
        takes: found.into_iter().filter(|a| a.x0 >= left).collect(),
    }
}

fn screenshot_dir() -> PathBuf {
    nudgebar_tests::workspace_root()
        .join("target")
        .join("editor-screenshots")
}

// ----- driving the window -----

struct Screen {
    conn: RustConnection,
    root: u32,
    parent: u32,
    width: u16,
    height: u16,
}

impl Screen {
    fn shot(&self) -> Shot {
        Shot::grab(&self.conn, self.parent, self.width, self.height)
    }

    /// A left click at window position (x, y), through XTEST: move, press,
    /// hold a moment (egui sees a press and a release in separate frames),
    /// release. The session keeps playing meanwhile.
    fn click(&self, s: &mut Session, x: i16, y: i16) {
        let c = &self.conn;
        c.xtest_fake_input(MOTION_NOTIFY_EVENT, 0, 0, self.root, x, y, 0)
            .unwrap();
        c.flush().unwrap();
        play_for(s, Duration::from_millis(150));
        c.xtest_fake_input(BUTTON_PRESS_EVENT, 1, 0, self.root, x, y, 0)
            .unwrap();
        c.flush().unwrap();
        play_for(s, Duration::from_millis(120));
        c.xtest_fake_input(BUTTON_RELEASE_EVENT, 1, 0, self.root, x, y, 0)
            .unwrap();
        c.flush().unwrap();
        play_for(s, Duration::from_millis(150));
    }

    /// Clicks until `done` says the click took effect: at most three
    /// clicks, ten seconds apart. A click lost on a loaded machine is
    /// retried; one that never works fails the test.
    fn click_until(
        &self,
        s: &mut Session,
        (x, y): (i16, i16),
        what: &str,
        mut done: impl FnMut(&mut Session) -> bool,
    ) {
        for _ in 0..3 {
            self.click(s, x, y);
            let began = Instant::now();
            while began.elapsed() < Duration::from_secs(10) {
                if done(s) {
                    return;
                }
                play_for(s, Duration::from_millis(50));
            }
        }
        let path = screenshot_dir().join("click-failed.png");
        self.shot().save_png(&path);
        panic!(
            "three clicks at ({x}, {y}) did not {what}; picture in {}",
            path.display()
        );
    }

    /// Keeps the host playing until a grab of the window satisfies `ready`.
    fn wait_for(&self, s: &mut Session, what: &str, mut ready: impl FnMut(&Shot) -> bool) -> Shot {
        let began = Instant::now();
        loop {
            let shot = self.shot();
            if ready(&shot) {
                return shot;
            }
            if began.elapsed() > SCREEN_TIMEOUT {
                let path = screenshot_dir().join("timed-out.png");
                shot.save_png(&path);
                panic!(
                    "waited {SCREEN_TIMEOUT:?} for the editor to show {what}; last picture in {}",
                    path.display()
                );
            }
            play_for(s, Duration::from_millis(100));
        }
    }
}

/// Runs host blocks for about `time` of wall-clock time.
fn play_for(s: &mut Session, time: Duration) {
    let began = Instant::now();
    while began.elapsed() < time {
        s.process_block(BLOCK).unwrap();
        std::thread::sleep(Duration::from_millis(2));
    }
}

/// True once the window shows a prompt roll with notes and `takes` take
/// rolls each with notes.
fn shows_prompt_and_takes(shot: &Shot, takes: usize) -> bool {
    let r = rolls(shot);
    let lamp = rgb!(theme::LAMP);
    let tide = rgb!(theme::TIDE);
    r.prompt
        .is_some_and(|p| shot.count(p, |c| near(c, lamp, 2)) >= 20)
        && r.takes.len() == takes
        && r.takes
            .iter()
            .all(|t| shot.count(*t, |c| near(c, tide, 2)) >= 10)
}

#[test]
fn the_editor_shows_the_session_and_answers_the_mouse() {
    let Some((display, _xvfb)) = display() else {
        return;
    };
    // The editor's window library opens its own X connection from $DISPLAY.
    std::env::set_var("DISPLAY", &display);

    let (conn, screen_num) = x11rb::connect(Some(&display)).expect("connect to the X server");
    let root = conn.setup().roots[screen_num].root;
    let black = conn.setup().roots[screen_num].black_pixel;

    // A host session on the built-in demo model: what a composer sees first.
    let ts = TimeSignature::FOUR_FOUR;
    let mut plugin = nudgebar();
    let ids = Ids::of(&mut plugin);
    assert!(plugin.has_gui(), "Nudgebar offers the CLAP gui extension");

    // The host's parent window, then the editor inside it.
    let parent = conn.generate_id().unwrap();
    let (w0, h0) = (theme::WINDOW_WIDTH as u16, theme::WINDOW_HEIGHT as u16);
    conn.create_window(
        x11rb::COPY_DEPTH_FROM_PARENT,
        parent,
        root,
        0,
        0,
        w0,
        h0,
        0,
        WindowClass::INPUT_OUTPUT,
        0,
        &CreateWindowAux::new().background_pixel(black),
    )
    .unwrap();
    conn.map_window(parent).unwrap();
    conn.flush().unwrap();
    let size = unsafe { plugin.open_gui_x11(parent as u64) }.expect("the editor opens");
    assert_eq!(
        (size.width, size.height),
        (theme::WINDOW_WIDTH, theme::WINDOW_HEIGHT),
        "the editor reports its size (no scaling under Xvfb)"
    );
    let (width, height) = (size.width as u16, size.height as u16);
    conn.configure_window(
        parent,
        &ConfigureWindowAux::new()
            .width(width as u32)
            .height(height as u32),
    )
    .unwrap();
    conn.flush().unwrap();
    let window = Screen {
        conn,
        root,
        parent,
        width,
        height,
    };

    let mut transport = HostTransport::new(120.0, ts);
    transport.playing = true;
    let mut s = Session::start(plugin, SAMPLE_RATE, BLOCK, transport).unwrap();

    // A host closes the editor before it destroys the plugin (CLAP
    // `ext/gui.h`); do so on failure too, so a failing check reads as one.
    let outcome = std::panic::catch_unwind(std::panic::AssertUnwindSafe(|| {
        work_the_editor(&mut s, &window, &ids)
    }));
    s.plugin.close_gui();
    if let Err(panic) = outcome {
        std::panic::resume_unwind(panic);
    }
    s.ledger.assert_clean("the editor session");
}

/// The composer's steps, each checked on screen.
fn work_the_editor(s: &mut Session, window: &Screen, ids: &Ids) {
    let ts = TimeSignature::FOUR_FOUR;
    let brass = rgb!(theme::BRASS);

    // 1. Before any prompt: the editor is up, says what to do, no rolls with notes.
    let empty = window.wait_for(s, "its panels", |shot| {
        let river = rgb!(theme::RIVER);
        shot.count(shot.whole(), |c| c == river) > shot.width * shot.height / 5
    });
    empty.save_png(&screenshot_dir().join("editor-empty.png"));
    assert_eq!(rolls(&empty).takes.len(), 0, "no takes before a prompt");

    // 2. Capture a bar through the host; the worker makes the takes.
    capture_bar_one(s, ids, &ferry_call(ts));
    let shot = window.wait_for(s, "the prompt and four takes", |shot| {
        shows_prompt_and_takes(shot, 4)
    });
    shot.save_png(&screenshot_dir().join("editor-takes.png"));

    // Not blank: text is drawn. The header strip holds the brass wordmark
    // and light text; a blank strip would be background only.
    let header = Area {
        x0: 0,
        y0: 0,
        x1: shot.width,
        y1: 40,
    };
    assert!(
        shot.count(header, |c| near(c, brass, 24)) >= 40,
        "the wordmark is drawn in the header"
    );
    assert!(
        shot.count(header, |c| c.iter().all(|&v| v > 150)) >= 40,
        "light text (the model name) is drawn in the header"
    );
    // Light glyphs across the window: labels, readings, sliders' texts.
    let glyphs = shot.count(shot.whole(), |c| c.iter().all(|&v| v > 170));
    assert!(
        glyphs >= 1500,
        "only {glyphs} light text pixels in the window"
    );
    let r = rolls(&shot);
    let prompt = r.prompt.unwrap();
    assert!(
        prompt.width() >= 250 && prompt.height() >= 70,
        "prompt roll {prompt:?}"
    );

    // 3. Click the second take: it becomes the selected take (a parameter the
    //    host sees), listening switches to takes, and its card is outlined.
    let second = r.takes[1];
    window.click_until(s, second.centre(), "select take 2", |s| {
        s.plugin.param_text(ids.selected.id).as_deref() == Some("2")
    });
    assert_eq!(
        s.plugin.param_text(ids.listen.id).as_deref(),
        Some("Take"),
        "clicking a take asks to hear it"
    );
    // The card around a roll: 6 px margin, the title row above the roll.
    let card = |roll: Area| Area {
        x0: roll.x0.saturating_sub(8),
        y0: roll.y0.saturating_sub(26),
        x1: roll.x1 + 8,
        y1: roll.y1 + 80,
    };
    let shot = window.wait_for(s, "take 2 outlined", |shot| {
        let r = rolls(shot);
        r.takes.len() == 4
            && shot.count(card(r.takes[1]), |c| near(c, brass, 6)) >= 300
            && shot.count(card(r.takes[3]), |c| near(c, brass, 6)) < 100
    });
    shot.save_png(&screenshot_dir().join("editor-selected.png"));

    // 4. Press Keep on the third take (top right of its card): the session
    //    holds it and the card is marked kept.
    let third = rolls(&shot).takes[2];
    let keep = (third.x1 as i16 - 22, third.y0 as i16 - 10);
    window.click_until(s, keep, "keep take 3", |s| {
        !kept_phrases(&mut s.plugin).is_empty()
    });
    let shot = window.wait_for(s, "take 3 marked kept", |shot| {
        let r = rolls(shot);
        r.takes.len() == 4 && {
            let t = r.takes[2];
            let badge = Area {
                x0: t.x1.saturating_sub(44),
                y0: t.y0.saturating_sub(18),
                x1: t.x1,
                y1: t.y0,
            };
            shot.count(badge, |c| near(c, brass, 6)) >= 300
        }
    });
    shot.save_png(&screenshot_dir().join("editor.png"));

    // 5. Close and reopen: everything is still there (it lives in the plugin).
    s.plugin.close_gui();
    play_for(s, Duration::from_millis(300));
    unsafe { s.plugin.open_gui_x11(window.parent as u64) }.expect("the editor opens again");
    window.wait_for(s, "the same takes after reopening", |shot| {
        shows_prompt_and_takes(shot, 4)
    });
}
