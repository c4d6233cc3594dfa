#!/usr/bin/python3
"""check_layers_selftest.py - check_layers.py on small made-up trees: that it
fails on an include up the layers and names it, accepts one that gives its
reason after `layer-exception:` (on the line or in the comment above), finds
a cycle inside one layer, leaves a private half-header of a unit (like
ncio_util.h) out of the cycles, and refuses files outside the layer folders,
two headers of one name and an include that names nothing.

Writes under $TG_TEST_TMPDIR (else the system's temporary folder).

Part of twingyre. GPL-3.0-or-later.
"""

import contextlib
import io
import os
import shutil
import sys
import tempfile

sys.dont_write_bytecode = True  # nothing written beside the script (read-only in distcheck)
sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import check_layers  # noqa: E402

FAILURES = []


def make_tree(parent, files):
    top = tempfile.mkdtemp(prefix="layers-", dir=parent)
    for rel, text in files.items():
        path = os.path.join(top, rel)
        os.makedirs(os.path.dirname(path), exist_ok=True)
        with open(path, "w", encoding="utf-8") as f:
            f.write(text)
    return top


def run(parent, files):
    top = make_tree(parent, files)
    out = io.StringIO()
    with contextlib.redirect_stdout(out):
        rc = check_layers.main(["check_layers.py", top])
    shutil.rmtree(top)
    return rc, out.getvalue()


def expect(name, parent, files, rc, present=(), absent=()):
    got_rc, text = run(parent, files)
    bad = []
    if got_rc != rc:
        bad.append("exit status %d, expected %d" % (got_rc, rc))
    bad += ["output lacks %r" % p for p in present if p not in text]
    bad += ["output has %r" % a for a in absent if a in text]
    print("%s %s" % ("ok  " if not bad else "FAIL", name))
    if bad:
        FAILURES.append(name)
        print("  " + "\n  ".join(bad))
        print("  output:\n    " + text.replace("\n", "\n    "))


# A base unit, a model unit using it, an experiment using the model.
BASE = {
    "src/base/status.h": "int tg_ok(void);\n",
    "src/base/status.c": '#include "status.h"\nint tg_ok(void)\n{\n    return 0;\n}\n',
    "src/model/model.h": '#include "status.h"\nint tg_model(void);\n',
    "src/model/model.c": '#include "model.h"\nint tg_model(void)\n{\n    return tg_ok();\n}\n',
    "src/experiments/run.h": '#include "model.h"\nint tg_run(void);\n',
    "src/experiments/run.c": '#include "run.h"\nint tg_run(void)\n{\n    return tg_model();\n}\n',
}


def tree(**changes):
    files = dict(BASE)
    for rel, text in changes.items():
        files[rel.replace("__", "/").replace("_DOT_", ".")] = text
    return files


def main():
    parent = os.environ.get("TG_TEST_TMPDIR") or None
    if parent:
        os.makedirs(parent, exist_ok=True)

    expect("a tree whose includes point down passes, with its counts", parent, tree(), 0,
           present=["3 units, 3 levels, 2 include edges", "0 upward includes", "check_layers: ok"])

    up = '#include "status.h"\n#include "run.h"\nint tg_ok(void)\n{\n    return 0;\n}\n'
    expect("an include up the layers fails and is named", parent,
           tree(src__base__status_DOT_c=up), 1,
           present=["src/base/status.c:2: status.c (base) includes run.h (experiments",
                    "1 upward includes without a reason"])
    expect("it also closes a cycle, which is reported from its lowest unit", parent,
           tree(src__base__status_DOT_c=up), 1,
           present=["CYCLE: src/base/status -> src/experiments/run -> src/model/model -> "
                    "src/base/status"])

    same_line = up.replace('"run.h"', '"run.h" /* layer-exception: a test of the marker */')
    expect("a layer-exception on the include line excuses it", parent,
           tree(src__base__status_DOT_c=same_line,
                src__experiments__run_DOT_h="int tg_run(void);\n"),
           0, present=["allowed (layer-exception): src/base/status.c:2"])

    above = up.replace('#include "run.h"',
                       '/* layer-exception: the reason starts here\n'
                       ' * and goes on */\n#include "run.h"')
    expect("a layer-exception in the comment just above excuses it", parent,
           tree(src__base__status_DOT_c=above, src__experiments__run_DOT_h="int tg_run(void);\n"),
           0, present=["1 with a layer-exception"])

    other = up.replace('#include "run.h"', '/* the run */\n#include "run.h"')
    expect("any other comment does not", parent, tree(src__base__status_DOT_c=other), 1,
           present=["UP THE LAYERS"])
    far = up.replace('#include "run.h"', '/* layer-exception: too far away */\n\n#include "run.h"')
    expect("nor a layer-exception two lines above", parent, tree(src__base__status_DOT_c=far), 1,
           present=["UP THE LAYERS"])
    empty = up.replace('"run.h"', '"run.h" /* layer-exception: */')
    expect("nor a layer-exception without a reason", parent, tree(src__base__status_DOT_c=empty), 1,
           present=["UP THE LAYERS"])

    expect("a cycle inside one layer fails", parent,
           tree(src__model__stepper_DOT_h='int tg_step(void);\n',
                src__model__stepper_DOT_c='#include "stepper.h"\n#include "model.h"\n'
                                          'int tg_step(void)\n{\n    return tg_model();\n}\n',
                src__model__model_DOT_c='#include "model.h"\n#include "stepper.h"\n'
                                        'int tg_model(void)\n{\n    return 0;\n}\n'), 1,
           present=["CYCLE: src/model/model -> src/model/stepper -> src/model/model", "1 cycles"],
           absent=["UP THE LAYERS"])

    expect("a private half-header of a unit (all its functions defined in one file) "
           "is part of that unit, not a cycle", parent,
           tree(src__model__model_util_DOT_h='#include "model.h"\nint tg_model_part(void);\n',
                src__model__model_DOT_c='#include "model.h"\n#include "model_util.h"\n'
                                        'int tg_model(void)\n{\n    return 0;\n}\n'
                                        'int tg_model_part(void)\n{\n    return 1;\n}\n'), 0,
           present=["0 cycles"])

    expect("the umbrella header sits at the highest layer it gathers: a model file that "
           "implements what it declares may include it", parent,
           tree(src__twingyre_DOT_h='#include "status.h"\n#include "model.h"\n'
                                    'void tg_init(void);\n',
                src__model__setup_DOT_c='#include "twingyre.h"\nvoid tg_init(void)\n{\n}\n'), 0,
           present=["0 upward includes"])
    expect("a lower file may not include the umbrella header", parent,
           tree(src__twingyre_DOT_h='#include "status.h"\n#include "model.h"\n',
                src__files__config_DOT_c='#include "twingyre.h"\n'), 1,
           present=["src/files/config.c:1: config.c (files) includes twingyre.h "
                    "(umbrella header at model"])

    expect("a file outside the layer folders fails", parent,
           tree(src__loose_DOT_c='#include "status.h"\n'), 1,
           present=["src/loose.c: not in a layer folder"])
    expect("two headers of one name fail", parent,
           tree(src__files__status_DOT_h="int tg_other(void);\n"), 1,
           present=["the header name status.h is also"])
    expect("an include that names no header fails", parent,
           tree(src__model__model_DOT_c='#include "model.h"\n#include "nowhere.h"\n'), 1,
           present=['src/model/model.c:2: #include "nowhere.h" names no header'])
    expect("closures/ sits at the model layer", parent,
           tree(closures__scheme_DOT_c='#include "model.h"\n#include "run.h"\n'), 1,
           present=["closures/scheme.c:2: scheme.c (model) includes run.h (experiments"])

    if FAILURES:
        print("%d of the self-test's cases failed" % len(FAILURES))
        return 1
    return 0


if __name__ == "__main__":
    sys.exit(main())
