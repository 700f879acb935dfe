//! The inspector's runner-up siblings, through the page's own steps (`Action::Inspect`, the
//! shell's one-row read, `Action::RowLogits`): equal to a plain softmax reference written here
//! from the logits, on the demo (float16) and the numpy fixtures; the chosen child's
//! conditional equals the stored path's bit for bit; files whose rows cannot be read alone say
//! why.

use hedgerow_board::runner_up::RunnerUpColumn;
use hedgerow_board::state::{Action, Board};
use hedgerow_core::{npy, Taxonomy};

use super::{demo, demo_board, fixture, Shell, TREE};

/// One step of the reference: the chosen child and its p, the runner-up and its p.
type Step = (u32, f32, Option<(u32, f32)>);

/// The plain reference: along the greedy path, each sibling group's softmax in f64
/// (z = logit / T_d, exp(z − max z) / Σ exp(z − max z), children in column order), the child
/// with the highest p (the first on ties), and the highest of the others; stored as f32.
fn reference(tax: &Taxonomy, temps: &[f64], logits: &[f64]) -> Vec<Step> {
    let mut out = Vec::new();
    let mut v = tax.root();
    loop {
        let children = tax.children(v);
        if children.is_empty() {
            return out;
        }
        let t = temps.get(out.len()).copied().unwrap_or(1.0);
        let z: Vec<f64> = children.iter().map(|&c| logits[c as usize] / t).collect();
        let max = z.iter().copied().fold(f64::NEG_INFINITY, f64::max);
        let e: Vec<f64> = z.iter().map(|z| (z - max).exp()).collect();
        let sum: f64 = e.iter().sum();
        let p: Vec<f64> = if children.len() == 1 {
            vec![1.0]
        } else {
            e.iter().map(|e| e / sum).collect()
        };
        // A stable sort from the highest p down keeps the lowest column first on ties.
        let mut order: Vec<usize> = (0..children.len()).collect();
        order.sort_by(|&a, &b| p[b].total_cmp(&p[a]));
        let best = order[0];
        let second = order.get(1).map(|&i| (children[i], p[i] as f32));
        out.push((children[best], p[best] as f32, second));
        v = children[best];
    }
}

/// Row `r`'s logits as f64, from the file's bytes.
fn row_values(file: &[u8], r: usize) -> Vec<f64> {
    let array = npy::read_array(file).expect("a .npy");
    let m = array.header.shape[1] as usize;
    let size = array.header.dtype.scalar.size();
    let bytes = &array.data[r * m * size..(r + 1) * m * size];
    let mut out = Vec::new();
    array.header.dtype.decode_into(bytes, &mut out);
    out
}

/// Open row `r` in the inspector and let the shell read it.
fn open(b: &mut Board, shell: &mut Shell, r: usize) -> RunnerUpColumn {
    b.apply(Action::Inspect(r));
    shell.pump(b);
    b.runner_up_column().expect("a row is open")
}

/// Check the inspector's column for rows `rows` against the reference on `logits`.
fn check(b: &mut Board, shell: &mut Shell, logits: &[u8], rows: impl Iterator<Item = usize>) {
    let a = b.active.clone().expect("a batch");
    let temps = a.batch.temperatures().expand(a.taxonomy.max_depth());
    let mut runner_ups = 0;
    for r in rows {
        let want = reference(&a.taxonomy, &temps, &row_values(logits, r));
        // The chosen children are the stored path, their conditionals its bits.
        let cond = a.batch.paths().cond(r);
        for (d, (node, p, _)) in want.iter().enumerate() {
            assert_eq!(a.taxonomy.ancestor(a.batch.paths().leaf(r), d + 1), *node);
            assert_eq!(cond[d].to_bits(), p.to_bits(), "row {r} depth {}", d + 1);
        }
        let RunnerUpColumn::Shown(cells) = open(b, shell, r) else {
            panic!("row {r}: {:?}", b.runner_up_column());
        };
        let got: Vec<Option<(String, f32)>> = cells
            .iter()
            .map(|c| c.as_ref().map(|c| (c.id.clone(), c.conditional as f32)))
            .collect();
        let want: Vec<Option<(String, f32)>> = want
            .iter()
            .map(|(_, _, s)| s.map(|(v, p)| (a.taxonomy.id(v).to_string(), p)))
            .collect();
        assert_eq!(got, want, "row {r}");
        runner_ups += got.iter().flatten().count();
    }
    assert!(runner_ups > 0);
}

#[test]
fn the_demo_s_runner_ups_equal_a_plain_softmax_and_keep_the_path_s_bits() {
    let (mut b, mut shell) = demo_board();
    assert_eq!(b.runner_up_column(), None, "no row open");
    let logits = demo("logits.npy");
    check(&mut b, &mut shell, &logits, (0..150).chain([19_999]));
    // A row opened again is not read again; a new batch (a temperature) reads it again.
    assert_eq!(b.wanted_row(), None);
    b.apply(Action::SetTemperature {
        depth: 2,
        value: 2.5,
    });
    shell.pump(&mut b);
    assert_eq!(b.wanted_row(), None, "re-read for the new batch");
    check(&mut b, &mut shell, &logits, [19_999, 3, 77].into_iter());
}

fn fixture_board(logits: &str) -> (Board, Shell) {
    let mut b = Board::new();
    let mut shell = Shell::new();
    shell.give(
        &mut b,
        &[
            ("tree.csv", TREE.as_bytes()),
            (logits, &fixture(logits)),
            ("labels-int64.npy", &fixture("labels-int64.npy")),
        ],
    );
    assert!(b.errors.is_empty(), "{:?}", b.errors);
    (b, shell)
}

#[test]
fn float16_big_endian_and_stored_bundle_rows_are_read_alone() {
    for name in ["logits-f16.npy", "logits-f32-be.npy", "logits-f64.npy"] {
        let (mut b, mut shell) = fixture_board(name);
        check(&mut b, &mut shell, &fixture(name), 0..12);
    }
    // np.savez stores its members: the row lies at a fixed offset inside the bundle. Its
    // logits are logits-f64.npy's.
    let (mut b, mut shell) = fixture_board("bundle.npz");
    check(
        &mut b,
        &mut shell,
        &fixture("logits-f64.npy"),
        (0..12).rev(),
    );
}

#[test]
fn compressed_and_fortran_order_logits_say_why_there_are_no_runner_ups() {
    for (name, why) in [
        ("bundle-compressed.npz", "compressed (np.savez_compressed)"),
        ("logits-fortran.npy", "in Fortran order"),
    ] {
        let (mut b, mut shell) = fixture_board(name);
        let column = open(&mut b, &mut shell, 4);
        let RunnerUpColumn::Note(note) = column else {
            panic!("{name}: {column:?}");
        };
        assert!(
            note.starts_with(
                "runner-ups need the logits as a C-order .npy or an uncompressed .npz member"
            ) && note.contains(why),
            "{name}: {note}"
        );
        // The path is still there; only the column is empty.
        assert_eq!(b.wanted_row(), None);
    }
}

#[test]
fn a_logits_file_that_changed_since_it_was_read_is_told() {
    let (mut b, _) = fixture_board("logits-f64.npy");
    b.apply(Action::Inspect(2));
    let want = b.wanted_row().expect("the row is wanted");
    assert_eq!(want.row, 2);
    let mut bytes = row_values(&fixture("logits-f64.npy"), 2);
    bytes.reverse();
    let changed: Vec<u8> = bytes.iter().flat_map(|v| v.to_le_bytes()).collect();
    b.apply(Action::RowLogits {
        row: 2,
        generation: want.generation,
        result: Ok(changed),
    });
    let column = b.runner_up_column();
    assert!(
        matches!(&column, Some(RunnerUpColumn::Note(n)) if n.contains("no longer gives the path")),
        "{column:?}"
    );
    // A read for another batch is dropped.
    b.apply(Action::Inspect(3));
    b.apply(Action::RowLogits {
        row: 3,
        generation: want.generation + 1,
        result: Ok(Vec::new()),
    });
    assert_eq!(b.runner_up_column(), Some(RunnerUpColumn::Reading));
}
