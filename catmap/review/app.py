"""The review screen (textual): one product at a time, decided with single keys.

The screen only shows and asks; every action is a call on :class:`ReviewSession`, which writes
through the store (one transaction each) and reads the item back. Layout, from top to bottom:

- the top line: feed, reviewer, and the pace (done this session, left, per minute, finish);
- left column: the product (title, brand, price, retailer path, id, why it is queued, a
  description excerpt) and its attributes (brand with how far it is trusted, who, age, colour
  family, restriction); a candidate brand says so, with the keys that confirm or reject it (an
  item queued for its candidate brand alone takes no Enter: the verdict settles it);
- right column: the suggested node (path, confidence as a percentage and a bar), the
  numbered alternatives, and the retailer category group with its consensus;
- a message line, then two lines of keys (every key the screen takes, always visible).

The layout fits an 80×24 terminal, measured in cells (CJK text takes two each): each
attribute, path and source is one line shortened to the column's width at a word boundary (a
path gives up its middle segments first, keeping its top and the node's own name); the suggested
node's path takes up to three lines; the title and the reasons for queueing share the product
panel (a long title is shortened, never the reasons pushed out), which gives up its description
first. A larger terminal shows the whole description and the feed's own fields. A resize draws
the item again at the new size.

Product text is shown as plain text (never read as markup): feeds contain brackets.

The restriction caution (:data:`catmap.attributes.RESTRICTION_CAUTION`) is shown wherever a
restricted node is in play: with the product's flag, under a suggested node that is restricted,
in the search dialog when the highlighted node is restricted, and in the group confirmation
when the group's node is.
"""

from __future__ import annotations

from collections.abc import Callable
from datetime import datetime
from typing import ClassVar

from rich.cells import cell_len
from rich.text import Text
from textual import events
from textual.app import App, ComposeResult
from textual.binding import Binding, BindingType
from textual.containers import Horizontal, Vertical
from textual.geometry import Size
from textual.screen import ModalScreen
from textual.widgets import Input, OptionList, Static
from textual.widgets.option_list import Option

from catmap.errors import CatmapError
from catmap.records import AGE_VALUES, WHO_VALUES
from catmap.review._fit import fit, fit_path, plain_emoji, wrap, wrap_path
from catmap.review.session import MAX_ALTERNATIVES, REASON_TEXT, ReviewSession
from catmap.store import ReviewView

BAR_WIDTH = 20
SEARCH_LIMIT = 12
# Below this score (0..100) a search match is weak: some typed word was found nowhere in the
# node's words, or only as a distant guess ("zzqxw" still finds "fizzy water", at 24). The
# dialog says so, and Enter on a weak match only asks: a second Enter takes it.
SEARCH_CLOSE_SCORE = 60.0
# Below this size the screen drops the description and the feed fields.
ROOMY_WIDTH = 120
ROOMY_HEIGHT = 36
DESCRIPTION_ROOMY = 1200

# Direct keys for each who and age value (upper case: the lower-case letters are taken).
WHO_KEYS = {"female": "F", "male": "M", "unisex": "U", "not_applicable": "X"}
AGE_KEYS = {"adult": "A", "kids": "K", "baby": "B", "not_applicable": "Z"}
assert set(WHO_KEYS) == set(WHO_VALUES) and set(AGE_KEYS) == set(AGE_VALUES)

# How far a brand is trusted, in the words the screen shows (catmap.records.BRAND_STATUSES).
BRAND_STATUS_TEXT = {
    "dictionary": "dictionary",
    "confirmed": "confirmed",
    "candidate": "candidate",
    "corrected": "set by a reviewer",
    "none": "",
}

# The keys the screen shows, two lines that fit 80 columns: (key, what it does).
KEY_LINES: tuple[tuple[tuple[str, str], ...], ...] = (
    (
        ("⏎", "accept"),
        ("1-3", "alt"),
        ("/", "find"),
        ("n", "no fit"),
        ("s", "skip"),
        ("u", "undo"),
        ("g", "group"),
        ("b", "brand"),
        ("c/r", "brand ok/no"),
    ),
    (
        ("w", "who"),
        *((key, value.replace("not_applicable", "n/a")) for value, key in WHO_KEYS.items()),
        ("a", "age"),
        *((key, value.replace("not_applicable", "n/a")) for value, key in AGE_KEYS.items()),
        ("q", "quit"),
    ),
)


def keys_text() -> Text:
    """The two key lines, keys in bold."""
    text = Text(no_wrap=True, overflow="ellipsis")
    for number, line in enumerate(KEY_LINES):
        if number:
            text.append("\n")
        for index, (key, label) in enumerate(line):
            if index:
                text.append(" ")
            text.append(key, style="bold reverse")
            text.append(f" {label}")
    return text


def topbar_text(who: list[str], progress: list[str], width: int) -> str:
    """The top line: the app's name, who reviews which feed, then the progress; on a narrow
    screen the name goes and the spacing tightens, so that the projected finish stays."""
    wide = "  ·  ".join(["catmap review", *who]) + "    " + "  ·  ".join(progress)
    if cell_len(wide) <= width:
        return wide
    return " · ".join(who) + "  " + " · ".join(progress)


def confidence_bar(confidence: float, width: int = BAR_WIDTH) -> str:
    """A bar of ``width`` cells, filled in proportion to ``confidence`` (0..1)."""
    filled = round(max(0.0, min(1.0, confidence)) * width)
    return "█" * filled + "·" * (width - filled)


def finish_label(finish: datetime, now: datetime) -> str:
    """When the queue would be empty, as the top line shows it: the clock time today, the day
    and time within a week, else in how many days (times in the local time zone)."""
    finish, now = finish.astimezone(), now.astimezone()
    days = (finish.date() - now.date()).days
    if days <= 0:
        return finish.strftime("%H:%M")
    if days < 7:
        return finish.strftime("%a %H:%M")
    return f"in {days} days"


def _restriction_caution() -> str:
    try:
        from catmap.attributes import RESTRICTION_CAUTION
    except ImportError:  # the attributes stage is optional for the screen
        return (
            "A restriction flag is an aid, not legal advice: local rules and the advertiser's "
            "policy decide."
        )
    return RESTRICTION_CAUTION


def _restricted_note(session: ReviewSession, node_id: str | None) -> str:
    """The caution for a restricted node ('' when the node carries no restriction)."""
    flag = session.restriction(node_id)
    if not flag:
        return ""
    return f"Restricted node ({flag}). {_restriction_caution()}"


class ConfirmScreen(ModalScreen[bool]):
    """A yes / no question (used before a group decision)."""

    BINDINGS: ClassVar[list[BindingType]] = [
        Binding("y", "answer(True)", "Yes"),
        Binding("enter", "answer(True)", "Yes", show=False),
        Binding("n", "answer(False)", "No"),
        Binding("escape", "answer(False)", "No", show=False),
    ]

    def __init__(self, question: str) -> None:
        super().__init__()
        self.question = question

    def compose(self) -> ComposeResult:
        with Vertical(id="dialog"):
            yield Static(Text(self.question), id="question")
            yield Static(Text("y / Enter: yes     n / Esc: no"), classes="hint")

    def action_answer(self, answer: bool) -> None:
        self.dismiss(answer)


class BrandInput(Input):
    """The brand box: its editing keys act in the order they were typed.

    A plain input leaves keys such as Ctrl+U, Backspace and Enter to its bindings, which run
    once the key has bubbled up to the app, after the letters typed behind them were already
    put in the box: "Ctrl+U, then a brand" typed fast cleared the brand just typed and saved
    an empty box. Here every bound key is handled at once, in the box's own turn.
    """

    _ACTIONS: ClassVar[dict[str, str]] = {
        key.strip(): binding.action
        for binding in Input.BINDINGS
        if isinstance(binding, Binding)
        for key in binding.key.split(",")
    }

    async def _on_key(self, event: events.Key) -> None:
        action = self._ACTIONS.get(event.key)
        if action is None:
            await super()._on_key(event)
            return
        event.stop()
        event.prevent_default()
        await self.run_action(action)


class BrandScreen(ModalScreen[str | None]):
    """A one-line input for the corrected brand.

    Keys typed before the box has focus (a fast typist right after ``b``) go into the box,
    and focusing the box never selects its text: a selection would make the next key replace
    what was typed or cleared just before.
    """

    AUTO_FOCUS = "#brand-input"
    BINDINGS: ClassVar[list[BindingType]] = [Binding("escape", "cancel", "Cancel")]

    def __init__(self, brand: str) -> None:
        super().__init__()
        self.brand = brand

    def compose(self) -> ComposeResult:
        with Vertical(id="dialog"):
            yield Static(Text("Correct brand (Enter saves with your decision, Esc cancels)"))
            yield BrandInput(value=self.brand, id="brand-input", select_on_focus=False)

    def on_mount(self) -> None:
        self.query_one("#brand-input", Input).focus()
        app = self.app
        if isinstance(app, ReviewApp):
            # Keys typed while this dialog was being opened are replayed into it, in order.
            for key in app.take_typed_ahead():
                app.post_message(events.Key(key.key, key.character))

    def on_input_submitted(self, event: Input.Submitted) -> None:
        self.dismiss(event.value)

    def action_cancel(self) -> None:
        self.dismiss(None)


class SearchScreen(ModalScreen[str | None]):
    """Search over the tree's names and synonyms; results update as you type.

    Enter takes the highlighted node when it matches well. On a weak match (score below
    :data:`SEARCH_CLOSE_SCORE`) the first Enter only says which node a second Enter would take;
    typing or moving the highlight calls that off.
    """

    BINDINGS: ClassVar[list[BindingType]] = [
        Binding("escape", "cancel", "Cancel"),
        Binding("down", "move(1)", "Next", priority=True),
        Binding("up", "move(-1)", "Previous", priority=True),
    ]

    def __init__(self, session: ReviewSession) -> None:
        super().__init__()
        self.session = session
        self._scores: dict[str, float] = {}  # node id -> score of the results shown
        self._note = ""  # what the note line says about the results
        self._asked: str | None = None  # the weak match a first Enter asked about

    def compose(self) -> ComposeResult:
        with Vertical(id="search-dialog"):
            yield Static(Text("Find a node, in any language: ↑↓ move · Enter picks · Esc back"))
            yield Input(placeholder="e.g. ankle boot, bottines, Stiefelette", id="search-input")
            yield Static(id="search-note")  # shown only when it has something to say
            yield OptionList(id="search-results")
            yield Static(id="search-caution")

    def on_input_changed(self, event: Input.Changed) -> None:
        results = self.query_one("#search-results", OptionList)
        results.clear_options()
        tree = self.session.tree
        matches = self.session.search(event.value, limit=SEARCH_LIMIT)
        typed = event.value.strip()
        self._scores = {match.node.id: match.score for match in matches}
        self._note = ""
        if typed and not matches:
            self._note = f"no node matches '{typed}': try other words, or Esc to go back"
        elif matches and matches[0].score < SEARCH_CLOSE_SCORE:
            self._note = f"no close match for '{typed}': type more, or Enter twice takes one"
        self._show_note(None)
        for match in matches:
            weak = match.score < SEARCH_CLOSE_SCORE
            label = Text(f"{match.score:5.1f}  {tree.path_text(match.node.id)}")
            if weak:
                label.stylize("dim")
            if not match.is_name:
                label.append(f"   ({match.language}: {match.term})", style="dim")
            flag = self.session.restriction(match.node.id)
            if flag:
                label.append(f"  [{flag}]", style="bold yellow")
            results.add_option(Option(label, id=match.node.id))
        if results.option_count:
            results.highlighted = 0
        self._show_caution()

    def _show_note(self, asked: str | None) -> None:
        """Show the note on the results, or the question about the weak match ``asked``."""
        self._asked = asked
        note = self._note
        if asked is not None:
            name = self.session.tree[asked].name
            note = f"weak match: Enter again puts it on '{name}' · type more to refine · Esc back"
        shown = self.query_one("#search-note", Static)
        shown.update(Text(note, style="bold yellow"))
        shown.display = bool(note)  # no blank line above the results when all is well

    def _pick(self, node_id: str | None) -> None:
        """Take a node that matches well; for a weak one, ask first (a second pick takes it)."""
        if node_id is None:
            return
        if self._scores.get(node_id, 0.0) >= SEARCH_CLOSE_SCORE or self._asked == node_id:
            self.dismiss(node_id)
            return
        self._show_note(node_id)

    def _show_caution(self) -> None:
        """Show the restriction caution when the highlighted node is restricted."""
        results = self.query_one("#search-results", OptionList)
        node_id = None
        if results.highlighted is not None and results.option_count:
            node_id = results.get_option_at_index(results.highlighted).id
        note = _restricted_note(self.session, node_id)
        self.query_one("#search-caution", Static).update(Text(note, style="italic yellow"))

    def on_option_list_option_highlighted(self, event: OptionList.OptionHighlighted) -> None:
        if self._asked is not None and event.option.id != self._asked:
            self._show_note(None)  # the question was about another node
        self._show_caution()

    def on_input_submitted(self, event: Input.Submitted) -> None:
        results = self.query_one("#search-results", OptionList)
        if results.highlighted is None:
            return
        self._pick(results.get_option_at_index(results.highlighted).id)

    def on_option_list_option_selected(self, event: OptionList.OptionSelected) -> None:
        self._pick(event.option.id)

    def action_move(self, step: int) -> None:
        results = self.query_one("#search-results", OptionList)
        if not results.option_count:
            return
        current = results.highlighted if results.highlighted is not None else -1
        results.highlighted = max(0, min(results.option_count - 1, current + step))
        if self._asked is not None:
            self._show_note(None)
        self._show_caution()

    def action_cancel(self) -> None:
        self.dismiss(None)


class ReviewApp(App[None]):
    """The review screen on top of a :class:`ReviewSession`.

    Args:
        session: the session; the app claims its first item when it starts unless one is
            already on screen.
    """

    TITLE = "catmap review"
    ENABLE_COMMAND_PALETTE = False
    CSS = """
    Screen { layout: vertical; }
    #topbar { height: 1; background: $primary-darken-2; color: $text; padding: 0 1;
              text-wrap: nowrap; text-overflow: ellipsis; }
    #columns { height: 1fr; }
    #left, #right { width: 1fr; }
    .panel { border: round $secondary; padding: 0 1; height: auto; }
    #product { height: 1fr; min-height: 5; }
    #attributes { height: auto; }
    #suggestion { height: auto; }
    #group { height: 1fr; min-height: 4; }
    #message { height: 1; padding: 0 1; color: $warning; text-wrap: nowrap;
               text-overflow: ellipsis; }
    #keys { height: 2; padding: 0 1; background: $panel; }
    ConfirmScreen, BrandScreen, SearchScreen { align: center middle; }
    #dialog { width: 100%; max-width: 72; height: auto; max-height: 100%;
              border: thick $accent; padding: 0 1; background: $surface; }
    #search-dialog { width: 100%; max-width: 100; height: 100%; max-height: 30;
                     border: thick $accent; padding: 0 1; background: $surface; }
    #search-results { height: 1fr; }
    #search-caution, #search-note { height: auto; }
    #search-note { display: none; }
    .hint { color: $text-muted; margin-top: 1; }
    """

    BINDINGS: ClassVar[list[BindingType]] = [
        Binding("enter", "accept", "Accept", key_display="Enter"),
        Binding("1", "alternative(1)", "Alt", key_display="1-3"),
        Binding("2", "alternative(2)", "Alternative 2", show=False),
        Binding("3", "alternative(3)", "Alternative 3", show=False),
        Binding("slash", "search", "Search", key_display="/"),
        Binding("n", "no_fit", "No fit"),
        Binding("s", "skip", "Skip"),
        Binding("u", "undo", "Undo"),
        Binding("g", "group_mode", "Group"),
        Binding("b", "brand", "Brand"),
        Binding("c", "confirm_brand", "Confirm brand"),
        Binding("r", "reject_brand", "Not a brand"),
        Binding("w", "who", "Who"),
        Binding("a", "age", "Age"),
        *(
            Binding(key, f"set_who('{value}')", f"Who {value}", show=False)
            for value, key in WHO_KEYS.items()
        ),
        *(
            Binding(key, f"set_age('{value}')", f"Age {value}", show=False)
            for value, key in AGE_KEYS.items()
        ),
        Binding("escape", "cancel_group", "Cancel group", show=False),
        Binding("q", "leave", "Quit"),
    ]

    def __init__(self, session: ReviewSession) -> None:
        super().__init__()
        self.session = session
        self.group_mode = False
        self.message = ""
        self._closed = False
        # Keys pressed between ``b`` and the brand dialog taking them (None: not opening).
        self._typed_ahead: list[events.Key] | None = None
        # The terminal's size as the last resize event gave it: this screen's resize handler
        # runs before the app's own, while ``self.size`` still holds the size before.
        self._terminal_size: Size | None = None

    # -- keys typed ahead of the brand dialog ---------------------------------------------------

    async def on_event(self, event: events.Event) -> None:
        if isinstance(event, events.Key) and self._typed_ahead is not None:
            # The brand dialog is on its way: these keys are meant for it, not for the
            # review keys (an "s" or an Enter here would skip or accept the item).
            self._typed_ahead.append(event)
            return
        await super().on_event(event)

    def take_typed_ahead(self) -> list[events.Key]:
        """The keys held while the brand dialog opened; from now on keys go to it directly."""
        held, self._typed_ahead = self._typed_ahead or [], None
        return held

    # -- layout --------------------------------------------------------------------------------

    def compose(self) -> ComposeResult:
        yield Static(id="topbar")
        with Horizontal(id="columns"):
            with Vertical(id="left"):
                yield Static(id="product", classes="panel")
                yield Static(id="attributes", classes="panel")
            with Vertical(id="right"):
                yield Static(id="suggestion", classes="panel")
                yield Static(id="group", classes="panel")
        yield Static(id="message")
        yield Static(keys_text(), id="keys")

    def on_mount(self) -> None:
        for widget_id, title in (
            ("product", "Product"),
            ("attributes", "Attributes"),
            ("suggestion", "Suggested node"),
            ("group", "Retailer category group"),
        ):
            self.query_one(f"#{widget_id}", Static).border_title = title
        if self.session.current is None:
            self._run(self.session.next)
        self.render_item()
        self.set_interval(15, self._render_topbar)
        # The tree's search index takes a moment to build: build it now, off the screen's
        # thread, so that the first search keystroke answers at once.
        self.run_worker(self._warm_search, thread=True, exclusive=True)

    def _warm_search(self) -> None:
        if self.session.current is not None:
            self.session.search("warm", limit=1)

    # -- drawing -------------------------------------------------------------------------------

    def _render_topbar(self) -> None:
        session = self.session
        pace = session.pace()
        view = session.current
        feed = view.item.feed_name if view is not None else (str(session.feed or "all feeds"))
        who = [f"feed {feed}", f"reviewer {session.reviewer}"]
        progress = [f"done {pace.done}", f"left {pace.left}"]
        if pace.per_minute is not None:
            progress.append(f"{pace.per_minute:.1f}/min")
        if pace.finish is not None:
            progress.append(f"finish ≈ {finish_label(pace.finish, session.now())}")
        self.query_one("#topbar", Static).update(Text(topbar_text(who, progress, self.size.width)))

    def render_item(self) -> None:
        """Draw the item on screen (or the empty queue) and the message line."""
        self._render_topbar()
        view = self.session.current
        panels = {
            name: self.query_one(f"#{name}", Static)
            for name in ("product", "attributes", "suggestion", "group")
        }
        message = Text(self.message)
        if self.group_mode:
            message = Text(
                "GROUP: the next node key (⏎, 1-3, /) decides the whole group; Esc cancels",
                style="bold",
            )
        self.query_one("#message", Static).update(message)
        if view is None:
            panels["product"].update(
                Text("The review queue is empty: nothing left to review. Press q to leave.")
            )
            for name in ("attributes", "suggestion", "group"):
                panels[name].update("")
            return
        for name, text in (
            ("product", self._product_text(view)),
            ("attributes", self._attributes_text(view)),
            ("suggestion", self._suggestion_text(view)),
            ("group", self._group_text(view)),
        ):
            text.rstrip()  # no blank last line inside a panel
            panels[name].update(text)

    def _screen_size(self) -> Size:
        return self._terminal_size or self.size

    def _inner_width(self) -> int:
        """Cells inside a panel: half the screen less the border and padding."""
        return max(self._screen_size().width // 2 - 4, 16)

    def _roomy(self) -> bool:
        size = self._screen_size()
        return size.width >= ROOMY_WIDTH and size.height >= ROOMY_HEIGHT

    def on_resize(self, event: events.Resize) -> None:
        self._terminal_size = event.size
        self.render_item()

    def _product_room(self, view: ReviewView) -> int:
        """Lines inside the product panel: the columns less the attributes panel and borders."""
        columns = self._screen_size().height - 4  # top line, message, two key lines
        attributes = self._attributes_text(view)
        attributes.rstrip()
        used = len(attributes.wrap(self.console, self._inner_width())) + 2
        return max(columns - used - 2, 3)

    def _product_text(self, view: ReviewView) -> Text:
        product = view.product
        width = self._inner_width()
        text = Text()
        codes = view.item.reasons or (view.item.reason,)
        reasons = [REASON_TEXT.get(code, code) for code in codes]
        title_full = len(wrap(product.title, width))
        reason_full = [len(wrap(reason, width - 7)) for reason in reasons]
        # The title and the reasons share the lines the other product lines leave: one line
        # each at least, then up to three for the title, then the whole reasons, then the
        # rest of the title (a long title never pushes why the item is queued out of sight).
        spare = self._product_room(view) - 3 - (1 if view.item.skips else 0)
        spare -= 1 + len(reasons)
        title_lines = 1 + max(min(min(title_full, 3) - 1, spare), 0)
        spare -= title_lines - 1
        reason_lines = []
        for full in reason_full:
            more = max(min(full - 1, spare), 0)
            reason_lines.append(1 + more)
            spare -= more
        title_lines += max(min(title_full - title_lines, spare), 0)
        text.append("\n".join(wrap(product.title, width, title_lines)) + "\n", style="bold")
        price = f"{product.price} {product.currency or ''}".strip() if product.price else "—"
        text.append(fit(f"brand {product.brand or '—'} · price {price}", width) + "\n")
        text.append("retailer " + fit_path(view.retailer_path or "—", width - 9) + "\n")
        text.append(fit(f"id {product.product_id} · feed {view.item.feed_name}", width) + "\n")
        for number, (reason, lines) in enumerate(zip(reasons, reason_lines, strict=True)):
            for index, line in enumerate(wrap(reason, width - 7, lines)):
                lead = "queued " if number == 0 and index == 0 else "       "
                text.append(lead, style="bold")
                text.append(line + "\n", style="bold yellow")
        if view.item.skips:
            text.append(f"skipped {view.item.skips}×\n", style="dim")
        if self._roomy():
            fields = (
                ("colour field", product.colour),
                ("size", product.size),
                ("gender field", product.gender_text),
                ("GTIN", product.gtin or product.gtin_raw),
                ("availability", product.availability),
                ("link", product.url),
            )
            for label, value in fields:
                if value:
                    text.append(fit(f"{label:<13}{value}", width) + "\n", style="dim")
            description = product.description
            if len(description) > DESCRIPTION_ROOMY:
                description = description[: DESCRIPTION_ROOMY - 1].rstrip() + "…"
        else:
            description = view.description_excerpt
        if description:
            text.append("\n" + plain_emoji(description), style="italic")
        return text

    def _attributes_text(self, view: ReviewView) -> Text:
        attributes, pending = view.attributes, self.session.pending
        width = self._inner_width()
        sources = self.session.sources()
        text = Text()

        def row(label: str, value: str, fixed: str | None, source: str) -> None:
            # One line each: label, value (→ correction), and where the value came from.
            shown = value or "—"
            if fixed is not None and fixed != value:
                shown = f"{shown} → {fixed or '—'}"
            line = f"{label:<7}{shown}"
            text.append(fit(line, width), style="bold green" if fixed is not None else "")
            room = width - cell_len(line) - 3
            if source and room >= 6:
                text.append(f" · {fit(source, room)}", style="dim")
            text.append("\n")

        brand = attributes.brand
        if brand:
            trust = BRAND_STATUS_TEXT.get(attributes.brand_status, attributes.brand_status)
            confidence = f"{attributes.brand_confidence:.0%}" if attributes.brand_confidence else ""
            # A brand with neither a confidence nor a trust level shows no empty "()".
            notes = ", ".join(note for note in (confidence, trust) if note)
            if notes:
                brand = f"{brand} ({notes})"
        row("brand", brand, pending.brand, sources["brand"])
        if self.session.candidate_brand():
            if self.session.candidate_shop_name() is not None:
                # Onboarding found the shop writing its own name in the brand field: seldom
                # a brand, so the reviewer is told before pressing c.
                text.append(
                    fit("       the feed's own shop name", width) + "\n", style="bold yellow"
                )
            text.append(fit("       c confirm · r not a brand", width) + "\n", style="yellow")
            if self.session.waits_for_brand():
                text.append(
                    fit("       queued for this brand alone: c or r settles it", width) + "\n",
                    style="yellow",
                )
        row("who", attributes.who, pending.who, sources["who"])
        row("age", attributes.age, pending.age, sources["age"])
        if attributes.audience_conflict:
            text.append(
                fit("       text and node disagree on who / age", width) + "\n", style="yellow"
            )
        row("colour", attributes.colour_family, None, sources["colour"])
        row("flag", attributes.restriction or "none", None, "")
        if self._roomy():
            # The extraction's own notes, word for word, when there is room for them.
            for label, evidence in (
                ("brand evidence", attributes.brand_evidence),
                ("audience evidence", attributes.audience_evidence),
            ):
                if evidence:
                    text.append(fit(f"{label}: {evidence}", width) + "\n", style="dim")
        # The caution goes with the product's flag and with a restricted suggested node (the
        # flag may not be set yet, e.g. when the node was suggested after the flag was read).
        if attributes.restriction or self.session.restriction(view.mapping.node_id):
            text.append(_restriction_caution() + "\n", style="italic yellow")
        if pending.any():
            text.append(fit("corrections are saved with your decision", width), style="dim")
        return text

    def _suggestion_text(self, view: ReviewView) -> Text:
        session = self.session
        mapping = view.mapping
        width = self._inner_width()
        text = Text()
        # The node on offer is the decision: its whole path over up to three lines, middle
        # segments giving way only when it needs more.
        for line in wrap_path(session.path_text(mapping.node_id), width, 3):
            text.append(line + "\n", style="bold")
        flag = session.restriction(mapping.node_id)
        if flag:
            text.append(
                fit(f"restricted node: {flag} (see the caution)", width) + "\n", style="bold yellow"
            )
        if mapping.node_id:
            bar = confidence_bar(mapping.confidence, max(min(BAR_WIDTH, width - 16), 4))
            text.append(fit(f"{mapping.confidence:6.1%}  {bar}  {mapping.method}", width) + "\n")
        else:
            # A reviewer said no node fits: there is no node to be confident of (the stored
            # confidence is the one the node had; the export writes none).
            text.append(fit(f"no node, no confidence  {mapping.method}", width) + "\n", style="dim")
        alternatives = mapping.alternatives[:MAX_ALTERNATIVES]
        if mapping.reason:
            reason = session.reason_text(
                mapping.method, mapping.reason, [a.node_id for a in alternatives]
            )
            text.append("\n".join(wrap(reason, width, 2)) + "\n", style="dim")
        if alternatives:
            text.append("alternatives\n", style="underline")
        for number, alternative in enumerate(alternatives, start=1):
            flag = session.restriction(alternative.node_id)
            mark = f" [{flag}]" if flag else ""
            text.append(f"{number} ", style="bold")
            path = session.path_text(alternative.node_id)
            text.append(f"{alternative.confidence:4.0%} ")
            text.append(fit_path(path, width - 7 - len(mark)))
            if mark:
                text.append(mark, style="bold yellow")
            text.append("\n")
        return text

    def _group_text(self, view: ReviewView) -> Text:
        group = view.group
        width = self._inner_width()
        text = Text()
        if not group.key:
            # Products without a retailer category share nothing: they are no group.
            text.append("(no retailer category)\n", style="bold")
            text.append(fit("no group: decided one by one", width) + "\n", style="dim")
            return text
        text.append(fit_path(group.key, width) + "\n", style="bold")
        products = "product" if group.size == 1 else "products"
        text.append(f"{group.size} {products}")
        if group.top_node:
            text.append(f", {group.top_share:.0%} →\n")
            text.append(fit_path(self.session.path_text(group.top_node), width))
        text.append(f"\n{group.open_items} still to review in this group\n")
        if group.strong:
            text.append(fit("strong: g then ⏎ settles the group", width) + "\n", style="green")
        room = self._group_list_room(view)
        if room > 1:
            # With room to spare: what a group decision would settle, before pressing g.
            waiting = self.session.store.group_waiting(
                view.item.feed_id, view.item.group_key, limit=room
            )
            others = [w for w in waiting if w[0] != view.product.product_id][: room - 1]
            if others:
                text.append("\nalso waiting in this group\n", style="underline")
            session = self.session
            for _product_id, title, node_id, confidence in others:
                leaf = session.path_text(node_id).rsplit(" > ", 1)[-1]
                line = f"{confidence:4.0%} {leaf} ← "
                text.append(line, style="dim")
                text.append(fit(title, width - cell_len(line)) + "\n")
        return text

    def _group_list_room(self, view: ReviewView) -> int:
        """Lines left in the group panel for the group's other waiting products (0: none)."""
        if not self._roomy():
            return 0
        columns = self._screen_size().height - 4  # top line, message, two key lines
        suggestion = len(self._suggestion_text(view).plain.rstrip("\n").split("\n")) + 2
        used = 2 + 5 + 2  # borders, the group's own lines, the list's heading
        return max(columns - suggestion - used, 0)

    # -- running actions -----------------------------------------------------------------------

    def _run(self, action: Callable[..., object], *args: object) -> bool:
        """Call a session action; a store error becomes the message and the next item."""
        try:
            action(*args)
        except CatmapError as error:
            self.message = f"could not do that: {error}"
            try:
                self.session.next()
            except CatmapError:
                pass
            return False
        return True

    def _node_decision(self, node_id: str | None, label: str) -> None:
        """Decide the item (or, in group mode, its whole group) on ``node_id`` (None: accept)."""
        session = self.session
        view = session.current
        if view is None:
            return
        if not self.group_mode:
            if node_id is None:
                done = self._run(session.accept)
            else:
                done = self._run(session.choose, node_id)
            if done:
                self.message = f"{label}: {view.product.product_id}"
                flag = session.restriction(node_id or view.mapping.node_id)
                if flag:
                    self.message += f" (restricted node: flagged {flag})"
                after = session.current
                if (
                    after is not None
                    and after.product.product_id == view.product.product_id
                    and "brand_candidate" in after.item.reasons
                ):
                    self.message += (
                        f"; the brand {after.attributes.brand} still waits: c confirm · r not "
                        "a brand"
                    )
            self.render_item()
            return
        try:
            target = session.group_target(node_id)
        except CatmapError as error:
            self.group_mode = False
            self.message = f"could not do that: {error}"
            self.render_item()
            return
        count = session.group_targets()
        question = (
            f"Put {count} product{'s' if count != 1 else ''} of group "
            f"'{view.item.group_key or '(none)'}' on\n{session.path_text(target)}?"
        )
        note = _restricted_note(session, target)
        if note:
            question += f"\n\n{note}"

        def answered(yes: bool | None) -> None:
            self.group_mode = False
            if yes:
                before = session.done
                if self._run(session.decide_group, target):
                    self.message = f"group decided: {session.done - before} products"
            else:
                self.message = "group decision cancelled"
            self.render_item()

        self.push_screen(ConfirmScreen(question), answered)

    def action_accept(self) -> None:
        session = self.session
        if not self.group_mode and session.waits_for_brand() and session.current is not None:
            # Queued for its brand alone: its node is not in question, so Enter writes nothing
            # (it would not settle the brand either).
            self.message = (
                f"this item waits for a verdict on the brand "
                f"'{session.current.attributes.brand}': c confirm · r not a brand · s skip"
            )
            self.render_item()
            return
        self._node_decision(None, "accepted")

    def action_alternative(self, number: int) -> None:
        if self.session.current is None:
            return
        node_id = self.session.alternative(number)
        if node_id is None:
            self.message = f"there is no alternative {number}"
            self.render_item()
            return
        self._node_decision(node_id, f"alternative {number} chosen")

    def action_search(self) -> None:
        if self.session.current is None:
            return

        def picked(node_id: str | None) -> None:
            if node_id:
                self._node_decision(node_id, "node chosen")
            else:
                self.message = "search cancelled"
                self.render_item()

        self.push_screen(SearchScreen(self.session), picked)

    def action_no_fit(self) -> None:
        if self.session.current is None:
            return
        if self.group_mode:
            self.message = "a whole group takes a node: Enter, 1-3 or /"
            self.render_item()
            return
        product_id = self.session.current.product.product_id
        if self._run(self.session.no_fit):
            self.message = f"no fitting node: {product_id}"
        self.render_item()

    def action_skip(self) -> None:
        if self.session.current is None:
            return
        self.group_mode = False
        product_id = self.session.current.product.product_id
        if self._run(self.session.skip):
            self.message = f"skipped {product_id}: it comes back later"
        self.render_item()

    def action_undo(self) -> None:
        self.group_mode = False
        reopened: list[int] = []

        def undo() -> None:
            reopened.extend(self.session.undo())

        if self._run(undo):
            brand = self.session.undone_brand
            products = (
                f"{brand.products} product{'s' if brand.products != 1 else ''}" if brand else ""
            )
            self.message = (
                f"undone: brand {brand.name} is a candidate again ({products})"
                + ("; its review item is back" if brand.items else "")
                if brand is not None
                else f"undone: {len(reopened)} item{'s' if len(reopened) != 1 else ''} reopened"
                if reopened
                else "nothing to undo"
            )
        self.render_item()

    def action_group_mode(self) -> None:
        view = self.session.current
        if view is None:
            return
        if not self.group_mode and not view.item.group_key:
            self.message = "no retailer category, so no group: decide this product alone"
            self.render_item()
            return
        self.group_mode = not self.group_mode
        self.message = ""
        self.render_item()

    def action_cancel_group(self) -> None:
        if self.group_mode:
            self.group_mode = False
            self.message = "group mode off"
            self.render_item()

    def action_brand(self) -> None:
        view = self.session.current
        if view is None:
            return
        current = self.session.pending.brand
        if current is None:
            current = view.attributes.brand or view.product.brand

        def typed(brand: str | None) -> None:
            if brand is None:
                self.message = "brand unchanged"
            else:
                try:
                    self.session.set_brand(brand)
                except CatmapError as error:
                    self.message = str(error)
                else:
                    self.message = "brand corrected: saved with your decision"
            self.render_item()

        self._typed_ahead = []
        self.push_screen(BrandScreen(current), typed)

    def _brand_verdict(self, confirm: bool) -> None:
        session = self.session
        if session.current is None:
            return
        brand = session.candidate_brand()
        try:
            verdict = session.confirm_brand() if confirm else session.reject_brand()
        except CatmapError as error:
            self.message = str(error)
        else:
            products = f"{verdict.products} product{'s' if verdict.products != 1 else ''}"
            self.message = (
                f"brand {verdict.name} confirmed: {products} now trusted"
                if confirm
                else f"'{brand}' is not a brand: taken off {products}"
            )
            if verdict.items:
                settled = len(verdict.items)
                self.message += f"; {settled} brand item{'s' if settled != 1 else ''} settled"
        self.render_item()

    def action_confirm_brand(self) -> None:
        self._brand_verdict(True)

    def action_reject_brand(self) -> None:
        self._brand_verdict(False)

    def action_who(self) -> None:
        if self.session.current is None:
            return
        self.message = f"who → {self.session.cycle_who()} (saved with your decision)"
        self.render_item()

    def action_age(self) -> None:
        if self.session.current is None:
            return
        self.message = f"age → {self.session.cycle_age()} (saved with your decision)"
        self.render_item()

    def action_set_who(self, value: str) -> None:
        if self.session.current is None:
            return
        self.message = f"who → {self.session.set_who(value)} (saved with your decision)"
        self.render_item()

    def action_set_age(self, value: str) -> None:
        if self.session.current is None:
            return
        self.message = f"age → {self.session.set_age(value)} (saved with your decision)"
        self.render_item()

    def action_leave(self) -> None:
        self._close_session()
        self.exit()

    async def action_quit(self) -> None:
        self.action_leave()

    def _close_session(self) -> None:
        if not self._closed:
            self._closed = True
            self.session.close()

    def on_unmount(self) -> None:
        self._close_session()
