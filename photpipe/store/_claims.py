"""Private: whose results a science frame's file continues, decided by content and full path.

A frame's results belong to the file's content (sha256 of its bytes) found at a full path. Before
a night's frames are listed in the store, each science file *claims* its results:

- the content was measured under this very name: nothing to do;
- it was measured under another name or night whose file still holds it: the same content is
  there twice, this one is left out ("same content as ...");
- it was measured under another name whose file is gone or changed (renamed, moved, or named
  anew because another file of the night now shares its stem): the results follow the file to
  its new name, nothing is measured again;
- another file's results hold this name (that file was deleted or renamed, this is a new file
  of the same stem): they are kept under that file's own name, so the new file never
  overwrites them.

Calibrated files follow their results: every move is returned so the caller (which owns the
files) renames them in ``calibrated/``.
"""

import os
from dataclasses import dataclass, field

__all__ = ["FrameClaim", "claim_frame"]


@dataclass(frozen=True)
class FrameClaim:
    """What the store decided for one science file.

    Attributes
    ----------
    same_as : str or None
        ``"night/frame"`` of another file that holds the same content and was measured: this
        file is left out.
    moved_from : str or None
        ``"night/frame"`` whose results now go by this file's name.
    set_aside : str or None
        ``"night/frame"`` under which another file's results that held this name were kept.
    calibrated_moves : list of (str, str)
        ``(old path, new path)`` of calibrated files to rename, in this order.
    """

    same_as: str = None
    moved_from: str = None
    set_aside: str = None
    calibrated_moves: list = field(default_factory=list)


def _measured_with(db, content_hash):
    return db.execute(
        "SELECT f.id, f.night, f.name, f.path, r.calibrated_path FROM frames f "
        "JOIN frame_results r ON r.frame_id = f.id WHERE f.content_hash = ? ORDER BY f.id",
        (content_hash,)).fetchall()


def _row_at(db, night, name):
    return db.execute(
        "SELECT f.id, f.path, r.frame_id IS NOT NULL, r.calibrated_path FROM frames f "
        "LEFT JOIN frame_results r ON r.frame_id = f.id WHERE f.night = ? AND f.name = ?",
        (night, name)).fetchone()


def _free_name(db, night, path, frame_id, newcomer):
    """A name for the results of ``path`` that no frame of ``night`` uses: its file name.

    The name is marked "(earlier)" when the file that takes its place has the same file name.
    """
    base = os.path.basename(str(path)) or f"frame {frame_id}"
    if base == os.path.basename(str(newcomer)):
        base = f"{base} (earlier)"
    name, n = base, 1
    while db.execute("SELECT 1 FROM frames WHERE night = ? AND name = ?",
                     (night, name)).fetchone():
        n += 1
        name = f"{base} ({n})"
    return name


def _rename(db, frame_id, night, name, path, old_calibrated, calibrated_for, moves):
    old_night, old_name = db.execute("SELECT night, name FROM frames WHERE id = ?",
                                     (frame_id,)).fetchone()
    db.execute("UPDATE frames SET night = ?, name = ?, path = ? WHERE id = ?",
               (night, name, path, frame_id))
    # the frame's problems go by its new name too
    db.execute("UPDATE OR REPLACE skipped SET night = ?, item = ? WHERE night = ? AND item = ?",
               (night, name, old_night, old_name))
    if old_calibrated:
        new = str(calibrated_for(night, name))
        db.execute("UPDATE frame_results SET calibrated_path = ? WHERE frame_id = ?",
                   (new, frame_id))
        if new != old_calibrated:
            moves.append((old_calibrated, new))


def claim_frame(db, night, name, path, content_hash, *, holds_content, calibrated_for):
    """Decide (and record) whose results the science file ``path`` continues.

    Parameters
    ----------
    db : sqlite3.Connection
        Inside a write transaction.
    night, name : str
        The night and the name the file goes by in this run.
    path : str
        The file's full path.
    content_hash : str
        sha256 of the file's bytes.
    holds_content : callable
        ``holds_content(path, content_hash) -> bool``: whether a file still holds that content.
    calibrated_for : callable
        ``calibrated_for(night, name) -> path`` of a frame's calibrated file.

    Returns
    -------
    FrameClaim
    """
    owners = _measured_with(db, content_hash)
    if any(o[1] == night and o[2] == name for o in owners):
        return FrameClaim()
    for _, o_night, o_name, o_path, _ in owners:
        if o_path != path and holds_content(o_path, content_hash):
            return FrameClaim(same_as=f"{o_night}/{o_name}")
    moves, set_aside = [], None
    here = _row_at(db, night, name)
    if here is not None and (owners or (here[1] != path and here[2])):
        here_id, here_path, measured, here_calibrated = here
        if measured:
            # another file's results hold this name: they keep that file's own name
            aside = _free_name(db, night, here_path, here_id, path)
            _rename(db, here_id, night, aside, here_path, here_calibrated, calibrated_for,
                    moves)
            set_aside = f"{night}/{aside}"
        else:
            db.execute("DELETE FROM frames WHERE id = ?", (here_id,))  # a listing only
    if not owners:
        return FrameClaim(set_aside=set_aside, calibrated_moves=moves)
    o_id, o_night, o_name, _, o_calibrated = owners[0]
    _rename(db, o_id, night, name, path, o_calibrated, calibrated_for, moves)
    return FrameClaim(moved_from=f"{o_night}/{o_name}", set_aside=set_aside,
                      calibrated_moves=moves)
