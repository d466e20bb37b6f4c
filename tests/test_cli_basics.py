"""Start-up of the command line: fast, and free of the heavy libraries."""

import subprocess
import sys


def test_help_imports_no_heavy_library():
    # Start-up budget: `qcthermo --help` must not import pandas, matplotlib or cclib (DEVELOPERS.md, "Package layout"),
    # nor dask (only --scheduler/--cluster need it).
    code = (
        "import sys; from qcthermo.cli import main\n"
        "try:\n    main(['--help'])\nexcept SystemExit:\n    pass\n"
        "heavy = [m for m in ('pandas', 'matplotlib', 'cclib', 'scipy', 'dask', 'distributed') if m in sys.modules]\n"
        "print('HEAVY', heavy)\n"
    )
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True).stdout
    assert "HEAVY []" in out


def test_no_command_prints_help_and_exits_2():
    from qcthermo.cli import main

    assert main([]) == 2


def test_engine_options_reach_the_conditions():
    from qcthermo.cli import build_parser
    from qcthermo.commands.common import conditions_from_args

    args = build_parser().parse_args(
        ["thermo", "logs", "--rotor-inertia", "molecular", "--zpe-scale", "0.98", "--imaginary-policy", "drop",
         "--temperature-range", "250:350:50", "--standard-state", "1M"]
    )
    cond = conditions_from_args(args)
    assert cond.rotor_inertia == "molecular"
    assert cond.zpe_scale == 0.98
    assert cond.imaginary_policy == "drop"
    assert cond.standard_state == "1M"
    assert list(cond.temperature) == [250.0, 300.0, 350.0]


def test_python_defaults_are_the_command_lines():
    # one set of defaults: `qcthermo thermo DIR` and qcthermo.Conditions() compute the same numbers, and the
    # default is Grimme's qRRHO at 100 cm^-1 (Chem. Eur. J. 2012, 18, 9955), as the --help text says
    from qcthermo.cli import build_parser
    from qcthermo.commands.common import conditions_from_args
    from qcthermo.records import Conditions

    parser = build_parser()
    assert conditions_from_args(parser.parse_args(["thermo", "logs"])) == Conditions()
    assert Conditions().low_mode_model == "qrrho" and Conditions().low_mode_threshold == 100.0
    help_text = " ".join(parser._subparsers._group_actions[0].choices["thermo"].format_help().split())
    assert "default qrrho" in help_text and "(100)" in help_text and "(298.15)" in help_text


def test_bad_option_values_are_one_line_errors(capsys, tmp_path):
    from qcthermo.cli import main

    assert main(["thermo", str(tmp_path), "--rotor-inertia", "heavy"]) == 2
    assert main(["thermo", str(tmp_path), "--temperature-range", "300:200:10"]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 2 and all(line.startswith("qcthermo thermo: error:") for line in err)
    assert "rotor inertia" in err[0] and "--temperature-range" in err[1]


def test_out_of_range_conditions_are_refused(capsys, tmp_path):
    # A temperature must be a finite positive number; the qRRHO threshold a wavenumber >= 0 (its weight uses
    # nu_0^4, so -10 would silently act as +10); a ZPE factor sits near 1 like the frequency factor (common practice).
    from qcthermo.cli import main

    bad = [["--temperature", "nan"], ["--temperature", "inf"], ["--low-mode-threshold", "-10"],
           ["--zpe-scale", "5"], ["--zpe-scale", "-1"], ["--rotor-inertia", "5"]]
    for option in bad:
        assert main(["thermo", str(tmp_path), *option]) == 2, option
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == len(bad) and all(line.startswith("qcthermo thermo: error:") for line in err)
    assert "temperature" in err[0] and "temperature" in err[1]
    assert "low-mode threshold" in err[2] and "ZPE scale" in err[3] and "ZPE scale" in err[4]
    assert "rotor inertia" in err[5]


def test_rotor_inertia_is_checked_from_python_as_from_the_command_line():
    # B_av of Grimme's free-rotor limit is a molecular moment of inertia (1e-44 kg m^2, Chem. Eur. J. 2012, 18,
    # 9955); 5 kg m^2 is a slip, whether typed on the command line or in a notebook
    import pytest

    from qcthermo.records import Conditions

    with pytest.raises(ValueError, match="rotor inertia"):
        Conditions(low_mode_model="qrrho", rotor_inertia=5.0)
    assert Conditions(rotor_inertia="molecular").rotor_inertia == "molecular"


def test_counts_out_of_range_are_usage_errors(capsys):
    # A negative number of decimals reached the label format as "{:.-2f}" and ended in a traceback; a
    # negative number of worker processes was quietly taken as one.
    import pytest

    from qcthermo.cli import main

    for argv in (["profile", "r.toml", "--precision", "-2"], ["thermo", "logs", "--jobs", "0"],
                 ["thermo", "logs", "--jobs", "-3"], ["profile", "r.toml", "--precision", "x"]):
        with pytest.raises(SystemExit) as exit_info:
            main(argv)
        assert exit_info.value.code == 2, argv
        err = capsys.readouterr().err
        assert "Traceback" not in err and ("--precision" in err or "--jobs" in err), argv


def test_temperature_and_temperature_range_together_are_a_usage_error(capsys):
    # --temperature 500 with a range was dropped without a word (the range won)
    import pytest

    from qcthermo.cli import main

    with pytest.raises(SystemExit) as exit_info:
        main(["thermo", "logs", "--temperature", "500", "--temperature-range", "250:350:50"])
    assert exit_info.value.code == 2 and "not allowed with" in capsys.readouterr().err
