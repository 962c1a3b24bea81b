from arrange.cli import entry

entry()
