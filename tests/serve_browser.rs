//! The page in a real browser: Debian's `chromium`, driven through
//! `chromium-driver` (WebDriver, W3C) by fantoccini. Opens the page, picks
//! the demo model, types a heat, reads the estimate and the verdict, pastes
//! two rows, downloads the CSV, uploads a workbook (.xlsx) through the
//! file input; every number must equal what
//! `mettle predict` gives for the same rows (the API's promise). `make
//! test` installs chromium and chromium-driver with apt-get.
//! The model and rows are the bundled invented Fellhaven data.

#[path = "../benches/support/server.rs"]
mod server;

use std::net::TcpListener;
use std::path::{Path, PathBuf};
use std::process::{Child, Command, Stdio};
use std::time::{Duration, Instant};

use fantoccini::{Client, ClientBuilder, Locator};
use serde_json::{json, Value};
use server::{root, Server};

const BIN: &str = env!("CARGO_BIN_EXE_mettle");

struct Driver(Child);

impl Drop for Driver {
    fn drop(&mut self) {
        let _ = self.0.kill();
        let _ = self.0.wait();
    }
}

fn free_port() -> u16 {
    TcpListener::bind("127.0.0.1:0")
        .and_then(|l| l.local_addr())
        .map(|a| a.port())
        .expect("a free loopback port")
}

fn find(names: &[&str]) -> PathBuf {
    for n in names {
        for dir in ["/usr/bin", "/usr/lib/chromium", "/usr/local/bin"] {
            let p = Path::new(dir).join(n);
            if p.exists() {
                return p;
            }
        }
    }
    panic!(
        "{} not found: `make test` installs Debian's chromium and chromium-driver \
         (apt-get install chromium chromium-driver)",
        names.join(" or ")
    );
}

/// chromedriver on a free loopback port, ready for a session.
fn start_driver() -> (Driver, u16) {
    let exe = find(&["chromedriver"]);
    let port = free_port();
    let child = Command::new(exe)
        .arg(format!("--port={port}"))
        .stdout(Stdio::null())
        .stderr(Stdio::null())
        .spawn()
        .expect("start chromedriver");
    let driver = Driver(child);
    let t0 = Instant::now();
    while std::net::TcpStream::connect(("127.0.0.1", port)).is_err() {
        assert!(
            t0.elapsed() < Duration::from_secs(30),
            "chromedriver did not start"
        );
        std::thread::sleep(Duration::from_millis(100));
    }
    (driver, port)
}

async fn browser(driver_port: u16, downloads: &Path, profile: &Path) -> Client {
    let chromium = find(&["chromium", "chromium-browser"]);
    let mut caps = serde_json::Map::new();
    caps.insert(
        "goog:chromeOptions".into(),
        json!({
            "binary": chromium,
            "args": ["--headless", "--no-sandbox", "--disable-gpu", "--disable-background-networking",
                "--disable-component-update", "--disable-sync", "--no-first-run",
                "--window-size=1400,2000", format!("--user-data-dir={}", profile.display())],
            "prefs": {"download.default_directory": downloads, "download.prompt_for_download": false},
        }),
    );
    ClientBuilder::new(hyper_util::client::legacy::connect::HttpConnector::new())
        .capabilities(caps)
        .connect(&format!("http://127.0.0.1:{driver_port}"))
        .await
        .expect("a browser session")
}

/// `mettle predict` of a CSV table, in `format`.
fn predict(table: &str, format: &str) -> String {
    let dir = tempfile::tempdir().expect("tmp");
    let p = dir.path().join("rows.csv");
    std::fs::write(&p, table).expect("write");
    predict_file(&p, format)
}

/// `mettle predict` of a table file (CSV or workbook), in `format`.
fn predict_file(p: &Path, format: &str) -> String {
    let o = Command::new(BIN)
        .args(["predict", "--model"])
        .arg(root().join("models/fellhaven_welds.json"))
        .arg("--input")
        .arg(p)
        .args(["--format", format])
        // the server computes every error bar exactly, as --exact does
        .arg("--exact")
        .output()
        .expect("run predict");
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    String::from_utf8(o.stdout).expect("utf8")
}

/// Row `i`'s centre of target `t` in predict's JSON (the mean, or the
/// median for a target whose interval kind is not normal).
fn centre(want: &Value, i: usize, t: &str) -> f64 {
    let key = if want["targets"][t]["interval_kind"] == "normal" {
        "mean"
    } else {
        "median"
    };
    want["rows"][i]["estimates"][t][key]
        .as_f64()
        .expect("centre")
}

/// The first finished download ending in `.ext` in `dir`, waited for.
fn downloaded(dir: &Path, ext: &str) -> PathBuf {
    let t0 = Instant::now();
    loop {
        let done = std::fs::read_dir(dir)
            .expect("downloads")
            .filter_map(|e| e.ok().map(|e| e.path()))
            .find(|p| p.extension().is_some_and(|x| x == ext));
        if let Some(f) = done {
            return f;
        }
        assert!(
            t0.elapsed() < Duration::from_secs(60),
            "no .{ext} file was downloaded"
        );
        std::thread::sleep(Duration::from_millis(200));
    }
}

async fn text_of(c: &Client, css: &str) -> String {
    c.find(Locator::Css(css))
        .await
        .expect(css)
        .text()
        .await
        .expect("text")
}

async fn wait_for(c: &Client, css: &str) -> fantoccini::elements::Element {
    match c
        .wait()
        .at_most(Duration::from_secs(60))
        .for_element(Locator::Css(css))
        .await
    {
        Ok(e) => e,
        Err(err) => {
            let shown = text_of(c, "#error").await;
            panic!("{css} did not appear ({err}); the page says: {shown}");
        }
    }
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn a_qa_engineer_estimates_heats_in_the_browser() {
    let server = Server::start(Path::new(BIN), &[&root().join("models")], &[]);
    let (_driver, port) = start_driver();
    let downloads = tempfile::tempdir().expect("tmp");
    let profile = tempfile::tempdir().expect("tmp");
    let c = browser(port, downloads.path(), profile.path()).await;

    c.goto(&format!("{}/", server.url))
        .await
        .expect("open the page");
    wait_for(&c, "body[data-ready='1']").await;
    assert!(text_of(&c, "#caution").await.contains("not test results"));
    // pick the demo model
    c.find(Locator::Css("#model option[value='fellhaven_welds']"))
        .await
        .expect("the demo model is offered")
        .click()
        .await
        .expect("pick");
    // type a heat: nickel 1.2 wt%, the rest the median training heat
    let ni = c.find(Locator::Id("in-ni_wt")).await.expect("ni field");
    ni.clear().await.expect("clear");
    ni.send_keys("1.2").await.expect("type");
    c.find(Locator::Id("estimate"))
        .await
        .expect("button")
        .click()
        .await
        .expect("click");
    let card = wait_for(&c, ".target[data-target='uts_mpa']").await;
    let shown: f64 = card
        .attr("data-centre")
        .await
        .expect("attr")
        .expect("centre")
        .parse()
        .expect("number");
    let verdict = c
        .find(Locator::Id("verdict"))
        .await
        .expect("verdict")
        .attr("data-verdict")
        .await
        .expect("attr")
        .expect("verdict");
    // the same heat through the command line
    let heat = c
        .execute(
            "return Array.from(document.querySelectorAll('#heat input')).map(i => [i.name, i.value]);",
            vec![],
        )
        .await
        .expect("read the form");
    let pairs: Vec<(String, String)> = serde_json::from_value(heat).expect("pairs");
    assert!(pairs.iter().any(|(n, v)| n == "ni_wt" && v == "1.2"));
    let table = format!(
        "{}\n{}\n",
        pairs
            .iter()
            .map(|p| p.0.as_str())
            .collect::<Vec<_>>()
            .join(","),
        pairs
            .iter()
            .map(|p| p.1.as_str())
            .collect::<Vec<_>>()
            .join(",")
    );
    let want: Value = serde_json::from_str(&predict(&table, "json")).expect("json");
    assert_eq!(shown, centre(&want, 0, "uts_mpa"));
    // the verdict word of predict's JSON (a graded "domain" where the
    // model gives one, else in_domain as in/out)
    let word = want["rows"][0]["domain"].as_str().map_or_else(
        || {
            if want["rows"][0]["in_domain"] == true {
                "in"
            } else {
                "out"
            }
            .to_string()
        },
        str::to_string,
    );
    assert_eq!(verdict, word);
    for t in ["yield_mpa", "elongation_pct", "charpy_j"] {
        let e = c
            .find(Locator::Css(&format!(".target[data-target='{t}']")))
            .await
            .expect(t);
        let v: f64 = e
            .attr("data-centre")
            .await
            .expect("attr")
            .expect(t)
            .parse()
            .expect("number");
        assert_eq!(v, centre(&want, 0, t), "{t}");
    }

    // paste two rows copied from a spreadsheet (tab-separated)
    let csv =
        std::fs::read_to_string(root().join("datasets/fellhaven_new_welds.csv")).expect("table");
    let two: Vec<&str> = csv.lines().take(3).collect();
    let two_csv = format!("{}\n", two.join("\n"));
    let tsv = two_csv.replace(',', "\t");
    c.execute(
        "document.getElementById('paste').value = arguments[0];",
        vec![json!(tsv)],
    )
    .await
    .expect("paste");
    c.find(Locator::Id("paste-go"))
        .await
        .expect("button")
        .click()
        .await
        .expect("click");
    wait_for(&c, "#rows-table tbody tr:nth-child(2)").await;
    let want: Value = serde_json::from_str(&predict(&two_csv, "json")).expect("json");
    let cells = c
        .find_all(Locator::Css("#rows-table td[data-target='charpy_j']"))
        .await
        .expect("cells");
    assert_eq!(cells.len(), 2);
    for (i, cell) in cells.iter().enumerate() {
        let v: f64 = cell
            .attr("data-centre")
            .await
            .expect("attr")
            .expect("centre")
            .parse()
            .expect("number");
        assert_eq!(v, centre(&want, i, "charpy_j"), "row {}", i + 1);
    }
    // download the CSV: the bytes `mettle predict --format csv` writes
    c.find(Locator::Id("download-csv"))
        .await
        .expect("button")
        .click()
        .await
        .expect("click");
    let file = downloaded(downloads.path(), "csv");
    let got = std::fs::read_to_string(&file).expect("downloaded CSV");
    assert_eq!(got, predict(&two_csv, "csv"));

    // upload a workbook through the file input: the bundled invented
    // fellhaven_new_welds.xlsx (first sheet 'welds', heats named in its
    // first column); estimates and ids as `mettle predict --input` gives
    let book = root().join("datasets/fellhaven_new_welds.xlsx");
    c.find(Locator::Id("file"))
        .await
        .expect("file input")
        .send_keys(&book.display().to_string())
        .await
        .expect("choose the workbook");
    wait_for(&c, "#rows-table td.id").await;
    let want: Value = serde_json::from_str(&predict_file(&book, "json")).expect("json");
    let ids = c
        .execute(
            "return Array.from(document.querySelectorAll('#rows-table td.id')).map(t => t.textContent);",
            vec![],
        )
        .await
        .expect("ids");
    let want_ids: Vec<Value> = want["rows"]
        .as_array()
        .expect("rows")
        .iter()
        .map(|r| r["id"].clone())
        .collect();
    assert!(
        want_ids.len() > 2 && want_ids[0] == "NEW-01",
        "{want_ids:?}"
    );
    assert_eq!(ids, Value::Array(want_ids));
    let centres = c
        .execute(
            "return Array.from(document.querySelectorAll(\"#rows-table td[data-target='uts_mpa']\")).map(t => Number(t.dataset.centre));",
            vec![],
        )
        .await
        .expect("centres");
    let centres: Vec<f64> = serde_json::from_value(centres).expect("numbers");
    for (i, v) in centres.iter().enumerate() {
        assert_eq!(*v, centre(&want, i, "uts_mpa"), "workbook row {}", i + 1);
    }
    // and a workbook out: the bytes `mettle predict --out FILE.xlsx` writes
    c.find(Locator::Id("download-xlsx"))
        .await
        .expect("button")
        .click()
        .await
        .expect("click");
    let got = std::fs::read(downloaded(downloads.path(), "xlsx")).expect("downloaded workbook");
    let out = downloads.path().join("cli").join("est.xlsx");
    std::fs::create_dir_all(out.parent().expect("folder")).expect("folder");
    let o = Command::new(BIN)
        .args(["predict", "--model"])
        .arg(root().join("models/fellhaven_welds.json"))
        .arg("--input")
        .arg(&book)
        .arg("--out")
        .arg(&out)
        .arg("--exact")
        .output()
        .expect("run predict");
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    assert_eq!(got, std::fs::read(&out).expect("workbook"));

    // a look at the whole page for a person: requirements, sweep and
    // transition drawn (saved only when METTLE_SCREENSHOT names a file)
    if let Ok(path) = std::env::var("METTLE_SCREENSHOT") {
        c.find(Locator::Id("require"))
            .await
            .expect("requirements")
            .send_keys("uts_mpa>=620\ncharpy_j>=47@test_temp_c=-40")
            .await
            .expect("type");
        c.find(Locator::Id("estimate"))
            .await
            .expect("button")
            .click()
            .await
            .expect("click");
        wait_for(&c, "#prob-table").await;
        c.find(Locator::Id("sw-go"))
            .await
            .expect("button")
            .click()
            .await
            .expect("click");
        wait_for(&c, "#sweep svg").await;
        c.find(Locator::Id("tr-require"))
            .await
            .expect("field")
            .send_keys("47@-40")
            .await
            .expect("type");
        c.find(Locator::Id("tr-go"))
            .await
            .expect("button")
            .click()
            .await
            .expect("click");
        wait_for(&c, "#crossings").await;
        let png = c.screenshot().await.expect("screenshot");
        std::fs::write(path, png).expect("write the screenshot");
    }
    c.close().await.expect("close the browser");
}
