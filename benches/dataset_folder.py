"""Reading and writing a UCI data-set folder (data.csv with a header row, the target last, and
splits/train_K.txt, test_K.txt), shared by the bench scripts that write a re-laid-out copy of
one for benches/inner_cv.py (indicator_layout.py, extra_columns_layout.py)."""

import shutil


def read(root, dataset):
    """The folder root/dataset, the header of its data.csv (a list of names) and its data rows
    (each a line of text, the header left out)."""
    src = root / dataset
    lines = (src / "data.csv").read_text(encoding="utf-8").splitlines()
    return src, lines[0].split(","), lines[1:]


def write(out_root, dataset, header, rows, src):
    """out_root/dataset/data.csv from `header` (names) and `rows` (lines of text), in that
    order, and src's training split files (splits/train_K.txt) copied beside it: the rows keep
    their order, so the split files' row indices still hold; inner_cv.py reads no test part.
    Returns the folder written and the number of split files copied."""
    dest = out_root / dataset
    (dest / "splits").mkdir(parents=True, exist_ok=True)
    (dest / "data.csv").write_text(",".join(header) + "\n" + "".join(r + "\n" for r in rows),
                                   encoding="utf-8")
    copied = 0
    for f in sorted((src / "splits").glob("train_*.txt")):
        shutil.copy(f, dest / "splits" / f.name)
        copied += 1
    return dest, copied
