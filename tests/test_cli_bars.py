"""`workbench bars`: the colour-bar subcommand."""

import json

from workbench.cli.main import main


class TestBarsCommand:
    def test_bt601_75_percent_json(self, capsys):
        """75 % BT.601 yellow is Y'CbCr 162/44/142 at 8 bits; bar order white..black."""
        assert main(["bars", "--amplitude", "75", "--luma", "BT.601", "--format", "json"]) == 0
        data = json.loads(capsys.readouterr().out)
        names = [b["bar"] for b in data["bars"]]
        # common practice: the bar order
        assert names == ["white", "yellow", "cyan", "green", "magenta", "red", "blue", "black"]
        yellow = data["bars"][1]
        # ITU-R BT.601-7 coefficients and code levels (computed); BT.801-1 worked example, second-hand (docs/methods.md §7)
        assert (yellow["Y8"], yellow["Cb8"], yellow["Cr8"]) == (162, 44, 142)

    def test_csv_has_header(self, capsys):
        """CSV output has one header row and eight bars."""
        assert main(["bars", "--format", "csv"]) == 0
        lines = capsys.readouterr().out.strip().splitlines()
        assert len(lines) == 9 and lines[0].startswith("bar")

    def test_unknown_luma(self, capsys):
        """An unknown luma system is one error line, exit 2."""
        assert main(["bars", "--luma", "BT.999"]) == 2
        assert capsys.readouterr().err.startswith("error:")
