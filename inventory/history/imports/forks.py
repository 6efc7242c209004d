"""Fork models in free text: each distinct text of a history file is decided once, by its
code, a remembered alias, the user's answer in ``--resolutions``, or a fuzzy match clear
enough to stand alone; the rest go to a review workbook for a person to decide."""

from __future__ import annotations

from sqlmodel import select

from inventory.core.errors import InventoryError, Problem, Source
from inventory.core.tables import ForkAlias, ForkFamily
from inventory.history.imports.report import ForkDecision, cell_ref
from inventory.history.imports.steps import Context
from inventory.history.jobs import fork_choices, fork_key, resolve_fork_text
from inventory.sheets.review import ReviewItem, read_resolutions, write_review


def resolve_forks(ctx: Context, texts: dict[str, tuple[str, Source, int]]
                  ) -> dict[str, ForkDecision]:
    """Decide every distinct fork text of the file (key -> decision), using the answers in
    ``--resolutions`` when given, and write the review workbook for what is left."""
    s = ctx.settings
    forks = fork_choices(ctx.session)
    answers: dict[str, tuple[str, Source]] = {}
    if s.resolutions is not None:
        valid = {c.code.upper(): c.code for c in forks.choices}
        got, problems = read_resolutions(s.resolutions, valid)
        ctx.report.problems += problems
        answers = {fork_key(t): v for t, v in got.items()}
    out: dict[str, ForkDecision] = {}
    for key, (text, first, nrows) in texts.items():
        code, how, score, cands = resolve_fork_text(
            text, forks, accept_score=s.accept_score,
            accept_margin=s.accept_margin, floor=s.candidate_floor, limit=s.candidates)
        if key in answers and how not in ("code",):
            code, how, score = answers[key][0], "resolution", 100.0
        out[key] = ForkDecision(text, code, how, score, nrows, first, cands)
    ctx.report.forks = sorted(out.values(), key=lambda d: (d.how != "review", -d.rows, d.text))
    if any(d.how == "review" for d in ctx.report.forks):
        target = s.review or ctx.path.with_name(ctx.path.stem + ".review.xlsx")
        asked = [d for d in ctx.report.forks if d.how in ("review", "resolution")]
        try:
            write_review(target, [ReviewItem(d.text, d.rows, cell_ref(d.first),
                                             tuple(d.candidates),
                                             d.code if d.how == "resolution" else None)
                                  for d in asked],
                         [(c.code, c.label) for c in forks.choices])
            ctx.report.review_path = str(target)
        except (OSError, InventoryError) as exc:
            if isinstance(exc, OSError):
                why = exc.strerror or str(exc)
            else:  # the writer's one-line reason: disk full, permission denied, ...
                why = exc.problems[0].message.replace(f"cannot write {target}", "").strip(": ")
            ctx.report.problems.append(Problem(
                f"cannot write the review workbook {target} ({why or 'failed'})",
                kind="usage", hint="choose where it goes with --review FILE.xlsx"))
    return out



def remember_aliases(ctx: Context) -> None:
    fams = {c: i for i, c in ctx.session.exec(select(ForkFamily.id, ForkFamily.code))}
    for d in ctx.report.forks:
        if d.how != "resolution" or d.code is None:
            continue
        key = fork_key(d.text)
        row = ctx.session.exec(select(ForkAlias).where(ForkAlias.text == key)).first()
        if row is None:
            ctx.session.add(ForkAlias(text=key, fork_family_id=fams[d.code]))
        else:
            row.fork_family_id = fams[d.code]
            ctx.session.add(row)
    ctx.session.flush()

