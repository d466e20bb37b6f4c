"""Start-up of the command line: fast, and free of the heavy libraries."""

import subprocess
import sys


def test_help_imports_no_heavy_library():
    # Start-up budget: `qcthermo --help` must not import pandas, matplotlib or cclib (DESIGN.md section 4).
    code = (
        "import sys; from qcthermo.cli import main\n"
        "try:\n    main(['--help'])\nexcept SystemExit:\n    pass\n"
        "heavy = [m for m in ('pandas', 'matplotlib', 'cclib', 'scipy') if m in sys.modules]\n"
        "print('HEAVY', heavy)\n"
    )
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True).stdout
    assert "HEAVY []" in out


def test_no_command_prints_help_and_exits_2():
    from qcthermo.cli import main

    assert main([]) == 2
