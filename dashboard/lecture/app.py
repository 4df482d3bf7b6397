"""Lecture mode at ``/lecture``: one presentation page per browser session.

The page address carries what is shown (``?lesson=rest-to-altitude&step=3``, or
``?factor=ph&ph=7.2``) and is restored on load; a value that cannot be used is named in a
visible message and its default is shown instead. This module must not import
``dashboard.app`` (which imports it to register the screen).
"""

from __future__ import annotations

import html

import panel as pn

from ..look import ACCENT, INK
from ..nav import screen_links
from ..responsive import Quiet, quicken
from ..urlstate import read_query, show_url_messages, url_message_pane, write_query
from .figures import PAPER
from .maker_view import LessonMakerView
from .state import LESSON_DIR, SHOWN_PARAMS, LectureState
from .views import LectureControls, LecturePlot

TITLE = "o2transit · lecture"


def bind_lecture_url(state: LectureState, notice: pn.pane.HTML) -> None:
    """Restore ``state`` from the page address and keep the address in step with it."""
    pairs = read_query()
    show_url_messages(notice, state.restore_query(pairs))
    owned = set(LectureState.QUERY_KEYS) | set(pairs)

    def sync(*_events) -> None:
        write_query(state.to_query(), owned)

    later = Quiet(sync)  # written once, shortly after the last change of a burst

    def changed(*_events) -> None:
        later()
        notice.visible = False  # the address will hold what is shown

    state.param.watch(changed, list(SHOWN_PARAMS))
    if pn.state.curdoc is not None and pn.state.curdoc.session_context is not None:
        pn.state.onload(sync)  # after the browser has sent its own address
    else:
        sync()


def page_shell(*objects) -> pn.Column:
    """The page's outer column, holding ``objects``. A plain request gets it empty; the
    content follows when the page connects (``dashboard.app``)."""
    return pn.Column(
        *objects,
        sizing_mode="stretch_both",
        styles={"background": PAPER, "color": INK},
        margin=0,
        css_classes=["o2-lecture"],
    )


def create_lecture_app(lesson_dir=None) -> pn.Column:
    """The lecture page: plot filling the window, caption, step and factor controls.

    Every row wraps instead of running off the screen, so the page fits 1024 px without a
    sideways scroll; the plot takes the height that is left.
    """
    pn.extension()
    state = LectureState(lesson_dir=LESSON_DIR if lesson_dir is None else lesson_dir)
    notice = url_message_pane()
    bind_lecture_url(state, notice)
    plot = LecturePlot(state)
    controls = LectureControls(state, plot)
    maker = LessonMakerView(state)
    header = pn.FlexBox(
        pn.pane.HTML(
            f"<b>{html.escape(TITLE)}</b>",
            styles={"color": "#ffffff", "font-size": "18px", "white-space": "nowrap"},
            margin=(6, 16),
        ),
        screen_links("/lecture"),
        pn.Spacer(styles={"flex": "1 1 0"}, width=0, height=0, margin=0),
        *controls.tools,
        maker.toggle,
        flex_wrap="wrap",
        align_items="center",
        styles={"background": ACCENT},
        sizing_mode="stretch_width",
        margin=0,
        css_classes=["o2-lecture-header"],
    )
    page = page_shell(header, notice, plot, controls.caption, controls, controls.message, maker)
    quicken(page)  # browser changes at once, one message per change
    return page
