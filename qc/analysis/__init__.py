"""Pure science for sersledger: numpy in, numbers, arrays or small dataclasses out.

Nothing in this package imports Django, touches the ORM or settings, or plots; only the
reader modules parse file contents.  Every public function names the published method it
implements in its docstring.
"""
