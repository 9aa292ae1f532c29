from PySide6 import QtCore
def test_dbg(loaded, qtbot):
    w = loaded
    w.show_median(True); qtbot.wait(20)
    mv = w.median
    for fid in ("p_off", "qrs_on", "t_off"):
        p = mv.line_point(fid, 1, 0.3)
        items = mv.items(p)
        print(fid, p, [(type(i).__name__, getattr(i, "fiducial", None)) for i in items][:5])
    assert 0
