"""The main window: inputs on the left, the settings and plots in the middle, cautions on the right.

Hook points for other panels:

* ``window.controller`` — the PlanController (``set_request``, ``plan_ready``, ``plan_invalid``);
* ``window.add_panel(title, widget, dock=False)`` — a tab beside "Derived values" (or a dock);
* ``window.menu("Case")`` — a menu by name (created if missing), for actions such as Open/Save.
"""

from __future__ import annotations

import sys

from PySide6.QtCore import QByteArray, Qt, Signal
from PySide6.QtGui import QAction, QActionGroup, QGuiApplication, QKeySequence, QUndoStack
from PySide6.QtWidgets import (
    QApplication,
    QDockWidget,
    QMainWindow,
    QMenu,
    QScrollArea,
    QSplitter,
    QTabWidget,
    QVBoxLayout,
    QWidget,
)

from ventset.errors import InputError
from ventset.fields import FIELDS
from ventset.gui import formstate as fs
from ventset.gui import settings as prefs
from ventset.gui.controller import PlanController
from ventset.gui.form import InputForm
from ventset.gui.geometry import DEFAULT_SIZE, FitColumn, clamp_to_screen, first_size  # noqa: F401 (DEFAULT_SIZE re-exported)
from ventset.gui.plots import BreathPlot, PlotPage, SensitivityPlot, SettingsMapPlot, WaveformPlot
from ventset.gui.readouts import (
    AssumptionsPanel,
    CautionsPanel,
    DerivedPanel,
    NoticeBanner,
    SettingsPanel,
    StatusStrip,
    first_error_text,
    reader_units,
)
from ventset.gui.theme import THEMES, Theme, apply_theme
from ventset.library import Library, load_library
from ventset.model import Plan, Request
from ventset.report import plan_to_text

UNDO_STEPS = 200  # undo history kept (the oldest steps are dropped): bounded memory over a long session

# Panels added by other modules: each defines install(window), called by ventset.gui.app.run() after the
# window is built (a failing panel is reported on stderr and the planning window still opens). The record
# (timeline.py) and fish-irrigation (aquatic_panel.py) tabs are built when first shown (ondemand.py).
EXTENSIONS: tuple[str, ...] = ("ventset.gui.case_ui", "ventset.gui.ondemand", "ventset.gui.compare_menu")


def install_extensions(window: MainWindow, *, name_widgets: bool = True) -> list[str]:
    """Install every panel in EXTENSIONS; returns the names installed. ``name_widgets``: then give the added
    panels' inputs their names and Tab order (access.apply; MainWindow(extensions=True) does it once, after)."""
    import importlib
    import traceback

    from ventset.gui import access

    done = []
    for name in EXTENSIONS:
        try:
            importlib.import_module(name).install(window)
        except Exception:  # a broken panel must not stop the planning window
            print(f"ventset: panel {name} could not be added:", file=sys.stderr)
            traceback.print_exc()
            continue
        done.append(name)
    if name_widgets:
        access.apply(window)  # the added panels' inputs named and threaded into the Tab order
    return done


def demo_request(library: Library) -> Request:
    """The demo patient the window opens with (the same as ``ventset demo``; data in ventset.demo)."""
    from ventset.demo import demo_request as core_demo

    return core_demo(library)


class MainWindow(QMainWindow):
    """ventset's window. Construct it directly in tests (no acknowledgement dialog here)."""

    theme_changed = Signal(object)

    def __init__(self, settings=None, library: Library | None = None, request: Request | None = None,
                 parent: QWidget | None = None, *, extensions: bool = False) -> None:
        """``extensions``: install the panels in EXTENSIONS too (the program's window), before the one pass that
        names every input and sets the Tab order (which otherwise runs here and again in install_extensions)."""
        super().__init__(parent)
        self.settings = settings if settings is not None else prefs.open_settings()
        self.library = library or load_library()
        self.controller = PlanController(self.library, self)
        self.undo = QUndoStack(self)
        self.undo.setUndoLimit(UNDO_STEPS)
        self.setWindowTitle("ventset — starting ventilator settings")
        from ventset.gui.theme import app_icon

        self.setWindowIcon(app_icon())
        self._menus: dict[str, QMenu] = {}
        self._panels: dict[str, QWidget] = {}

        units = {k: prefs.field_unit(self.settings, k, spec.units) for k, spec in FIELDS.items()}
        gas = prefs.gas_unit(self.settings)
        for k in fs.GAS_FIELDS:
            if gas in FIELDS[k].units:
                units[k] = gas
        self.form = InputForm(self.controller, self.library, self.undo, units)
        self._build_central()
        self._build_menus()
        self.controller.plan_ready.connect(self._show_plan)
        self.controller.plan_views.connect(self._show_views)
        self.tabs.currentChanged.connect(self._tab_shown)
        self.controller.plan_invalid.connect(self._show_invalid)
        self.form.units_changed.connect(self._save_units)
        self.form.gas_unit_changed.connect(self._gas_unit_changed)
        self.status.go_to_field.connect(self.form.focus_field)

        self.theme: Theme = THEMES.get(str(self.settings.value("view/theme", "day")), THEMES["day"])
        self.set_theme(self.theme.key)
        self._restore()
        self.controller.set_request(request if request is not None else demo_request(self.library))
        self.controller.flush()
        self.undo.clear()
        self._fit_middle()
        if extensions:
            install_extensions(self, name_widgets=False)
        from ventset.gui import access

        access.apply(self)

    def _fit_middle(self) -> None:
        scroll, middle, tiles = self._middle
        bar = self.style().pixelMetric(self.style().PixelMetric.PM_ScrollBarExtent)
        margins = middle.layout().contentsMargins()
        scroll.setMinimumWidth(max(tiles + margins.left() + margins.right(), middle.minimumSizeHint().width()) + bar)

    # ------------------------------------------------------------------ layout
    def _build_central(self) -> None:
        central = QWidget(self)
        outer = QVBoxLayout(central)
        m = self.fontMetrics().height() // 3
        outer.setContentsMargins(m, m, m, m)
        outer.setSpacing(m)
        self.notice = NoticeBanner(central)
        self.status = StatusStrip(central)
        outer.addWidget(self.notice)
        outer.addWidget(self.status)

        self.splitter = QSplitter(Qt.Orientation.Horizontal, central)
        self.splitter.setObjectName("main-splitter")
        self.splitter.setChildrenCollapsible(False)
        form_scroll = QScrollArea(self.splitter)
        form_scroll.setObjectName("form-scroll")
        form_scroll.setWidgetResizable(True)
        # The form scrolls sideways only when the window is too narrow for it (a small screen at 2×).
        form_scroll.setHorizontalScrollBarPolicy(Qt.ScrollBarPolicy.ScrollBarAsNeeded)
        form_scroll.setWidget(self.form)
        self.form_width = self.form.minimumSizeHint().width() + 24
        form_scroll.setMinimumWidth(min(self.form_width, self.fontMetrics().averageCharWidth() * 34))
        self.form_scroll = form_scroll

        middle_scroll = QScrollArea(self.splitter)  # scrolls only when the window is too low for the tiles
        middle_scroll.setObjectName("middle-scroll")
        middle_scroll.setFocusPolicy(Qt.FocusPolicy.NoFocus)  # a container: Tab goes to what it holds
        middle_scroll.setWidgetResizable(True)
        middle_scroll.setFrameShape(QScrollArea.Shape.NoFrame)
        middle_scroll.setHorizontalScrollBarPolicy(Qt.ScrollBarPolicy.ScrollBarAlwaysOff)
        middle = FitColumn(middle_scroll)
        middle_scroll.setWidget(middle)
        mid = middle.layout()
        mid.setContentsMargins(0, 0, 0, 0)
        mid.setSpacing(m)
        self.settings_panel = SettingsPanel(middle)
        mid.addWidget(self.settings_panel)
        self.tabs = QTabWidget(middle)
        self.tabs.setObjectName("detail-tabs")
        self.tabs.setDocumentMode(True)
        plots = PlotPage(self.tabs, m)
        self.plot_columns = plots.columns
        self.breath_plot = BreathPlot(plots)
        self.map_plot = SettingsMapPlot(plots)
        self.wave_plot = WaveformPlot(plots)
        self.sens_plot = SensitivityPlot(plots)
        plots.add(0, self.breath_plot, 40)
        plots.add(0, self.map_plot, 60)
        plots.add(1, self.wave_plot, 58)
        plots.add(1, self.sens_plot, 42)
        self.plots_page = plots
        self.plot_cards = (self.breath_plot, self.map_plot, self.wave_plot, self.sens_plot)
        for card in self.plot_cards:
            card.enlarge.connect(self._enlarge)
        self.derived = DerivedPanel(self.tabs)
        self.assumptions = AssumptionsPanel(self.tabs)
        # With large system fonts or a small window the plots scroll rather than squash into illegibility.
        plots_scroll = QScrollArea(self.tabs)
        plots_scroll.setObjectName("plots-scroll")
        plots_scroll.setWidgetResizable(True)
        plots_scroll.setFrameShape(QScrollArea.Shape.NoFrame)
        plots_scroll.setHorizontalScrollBarPolicy(Qt.ScrollBarPolicy.ScrollBarAlwaysOff)
        plots_scroll.setWidget(plots)
        self.tabs.addTab(plots_scroll, "Plots")
        # What each tab draws from a plan: the tab shown draws at once, a hidden one just before it is shown.
        self._tab_views = {
            plots_scroll: self._draw_plots,
            self.assumptions: lambda plan: self.assumptions.show_plan(plan, self.form.gas_unit()),
            self.derived: lambda plan: self.derived.show_plan(plan, self.form.gas_unit(),
                                                             self.form.state[fs.UNIT + "mass"])}
        self._views_due: set = set()
        self._views_plan: Plan | None = None
        self.tabs.addTab(self.derived, "Derived values")
        self.tabs.addTab(self.assumptions, "Assumptions and sources")
        mid.addWidget(self.tabs, 1)
        # Never narrower than its content: the tiles as first placed (four columns; measured now, before the first
        # plan reflows them) and the rest once the theme and the plan are in (_fit_middle: measuring the tabs
        # and their plots now costs start-up some 20 ms, as all of it is measured again when shown).
        self._middle = (middle_scroll, middle, self.settings_panel.minimumSizeHint().width())

        self.cautions = CautionsPanel(self.splitter)
        self.splitter.setStretchFactor(0, 0)
        self.splitter.setStretchFactor(1, 1)
        self.splitter.setStretchFactor(2, 0)
        outer.addWidget(self.splitter, 1)
        self.setCentralWidget(central)

    def _build_menus(self) -> None:
        bar = self.menuBar()
        case = self.menu("&Case")
        self.act_demo = QAction("Load the demo patient", self)
        self.act_demo.triggered.connect(self.load_demo)
        case.addAction(self.act_demo)
        self.act_copy = QAction("Copy plan as text", self)
        self.act_copy.setShortcut(QKeySequence("Ctrl+Shift+C"))
        self.act_copy.triggered.connect(self.copy_plan)
        case.addAction(self.act_copy)
        case.addSeparator()
        self.act_quit = QAction("Quit", self)
        self.act_quit.setShortcut(QKeySequence.StandardKey.Quit)
        self.act_quit.triggered.connect(self.close)
        case.addAction(self.act_quit)

        edit = self.menu("&Edit")
        self.act_undo = self.undo.createUndoAction(self, "Undo")
        self.act_undo.setShortcut(QKeySequence.StandardKey.Undo)
        self.act_redo = self.undo.createRedoAction(self, "Redo")
        self.act_redo.setShortcut(QKeySequence.StandardKey.Redo)
        for a in (self.act_undo, self.act_redo):
            a.setShortcutContext(Qt.ShortcutContext.WindowShortcut)
            edit.addAction(a)
        edit.addSeparator()
        from ventset.gui import editing

        self.edit_actions = editing.install(self, edit)
        edit.addSeparator()
        self.act_find = QAction("Find species", self)
        self.act_find.setShortcut(QKeySequence.StandardKey.Find)
        self.act_find.triggered.connect(self._find_species)
        edit.addAction(self.act_find)
        self.act_problem = QAction("Go to the field with a problem", self)
        self.act_problem.setShortcut(QKeySequence("F8"))
        self.act_problem.triggered.connect(self._go_to_problem)
        edit.addAction(self.act_problem)

        view = self.menu("&View")
        gas_menu = view.addMenu("Gas pressures in")
        self.gas_group = QActionGroup(self)
        self.gas_actions: dict[str, QAction] = {}
        for unit, key in (("mmHg", "Ctrl+Shift+M"), ("kPa", "Ctrl+Shift+K")):
            a = QAction(unit, self, checkable=True)
            a.setShortcut(QKeySequence(key))
            a.triggered.connect(lambda _=False, u=unit: self.form.set_gas_unit(u))
            self.gas_group.addAction(a)
            gas_menu.addAction(a)
            self.gas_actions[unit] = a
        self.gas_actions[self.form.gas_unit()].setChecked(True)
        look = view.addMenu("Appearance")
        self.theme_group = QActionGroup(self)
        self.theme_actions: dict[str, QAction] = {}
        for i, t in enumerate(THEMES.values()):
            a = QAction(t.label, self, checkable=True)
            a.setShortcut(QKeySequence(f"Ctrl+Alt+{i + 1}"))
            a.triggered.connect(lambda _=False, k=t.key: self.set_theme(k))
            self.theme_group.addAction(a)
            look.addAction(a)
            self.theme_actions[t.key] = a
        view.addSeparator()
        self.view_panels = view
        for i, title in enumerate(("Plots", "Derived values", "Assumptions and sources")):
            a = QAction(f"Show {title.lower()}", self)
            a.setShortcut(QKeySequence(f"Ctrl+{i + 1}"))
            a.triggered.connect(lambda _=False, ix=i: self.tabs.setCurrentIndex(ix))
            view.addAction(a)

        helpm = self.menu("&Help")
        from ventset.gui.help_ui import install_help

        install_help(self, helpm)
        a = QAction("Before you start (standing notice)", self)
        a.triggered.connect(self.show_acknowledgement)
        helpm.addAction(a)
        if QGuiApplication.platformName() == "offscreen":
            bar.setNativeMenuBar(False)

    # ------------------------------------------------------------------ hook points
    def menu(self, name: str) -> QMenu:
        """The menu called ``name`` ('Case', 'File', '&Case' …), created before Help if missing."""
        plain = name.replace("&", "").lower()
        if plain == "file":
            plain = "case"  # one menu for patient files, whichever name a panel asks for
        if plain in self._menus:
            return self._menus[plain]
        title = name if plain != "case" or "&" in name else "&Case"
        help_menu = self._menus.get("help")
        m = QMenu(title, self)
        if help_menu is not None:
            self.menuBar().insertMenu(help_menu.menuAction(), m)
        else:
            self.menuBar().addMenu(m)
        self._menus[plain] = m
        return m

    def add_panel(self, title: str, widget: QWidget, *, dock: bool = False,
                  area: Qt.DockWidgetArea = Qt.DockWidgetArea.RightDockWidgetArea) -> QWidget:
        """Add a panel as a tab beside the plots and derived values (default) or as a dock; returns it."""
        if dock:
            d = QDockWidget(title, self)
            d.setObjectName(f"dock-{title}")
            d.setWidget(widget)
            self.addDockWidget(area, d)
            self.view_panels.addAction(d.toggleViewAction())
            self._panels[title] = d
            return d
        index = self.tabs.addTab(widget, title)
        a = QAction(f"Show {title.lower()}", self)
        if index < 9:
            a.setShortcut(QKeySequence(f"Ctrl+{index + 1}"))
        a.triggered.connect(lambda: self.tabs.setCurrentWidget(widget))
        self.view_panels.addAction(a)
        self._panels[title] = widget
        return widget

    # ------------------------------------------------------------------ plan → views
    def _show_plan(self, plan: Plan) -> None:
        """First phase: every number, painted in the keystroke's frame (the drawn views follow)."""
        gas, mass = self.form.gas_unit(), self.form.state[fs.UNIT + "mass"]
        self.status.show_plan(plan, gas, mass)
        self.status.set_current(True)
        self.settings_panel.show_plan(plan, gas, mass)
        self.settings_panel.set_stale(False)
        self.cautions.show_plan(plan, gas)
        self.cautions.set_stale(False)
        name = plan.request.patient.name
        self.setWindowTitle(f"ventset — {name or plan.resolved.species_label}")

    def _show_views(self, plan: Plan) -> None:
        """Second phase: the tab shown draws the plan now; the others when they are shown, before they paint."""
        self._views_plan = plan
        self._views_due = set(self._tab_views)
        self._tab_shown(self.tabs.currentIndex())

    def _tab_shown(self, index: int) -> None:
        page = self.tabs.widget(index)
        if page in self._views_due and self._views_plan is not None:
            self._views_due.discard(page)
            self._tab_views[page](self._views_plan)

    def _draw_plots(self, plan: Plan) -> None:
        gas = self.form.gas_unit()
        self.breath_plot.show_plan(plan)
        self.map_plot.show_plan(plan, gas)
        self.wave_plot.show_plan(plan)
        self.sens_plot.show_plan(plan, gas)
        for card in self.plot_cards:
            card.set_stale(self.controller.stale)
        if not any(card.isVisibleTo(self.plots_page) for card in self.plot_cards):  # after a new case
            self._enlarge(next((c for c in self.plot_cards if c.zoom.isChecked()), None))

    def _show_invalid(self, errors: list[InputError]) -> None:
        key = fs.error_key(errors[0]) if errors else ""
        blank = self.controller.plan is None  # a new case: nothing of an earlier patient stays on screen
        self.status.set_current(False, first_error_text(errors, not blank), key or "")
        self.settings_panel.set_stale(True)
        self.cautions.set_stale(not blank)
        for card in self.plot_cards:
            card.set_stale(True)
        if blank:
            for panel in (self.status, self.settings_panel, self.cautions, self.derived, self.assumptions):
                panel.clear()
            for card in self.plot_cards:
                card.setVisible(False)

    def _enlarge(self, card) -> None:
        """Show one plot alone over the whole plot area (card), or all four (None)."""
        self.plots_page.enlarge(card)
        for c in self.plot_cards:
            if c is not card and c.zoom.isChecked():
                c.zoom.blockSignals(True)
                c.zoom.setChecked(False)
                c.zoom.setText("Enlarge")
                c.zoom.blockSignals(False)

    def _gas_unit_changed(self, unit: str) -> None:
        if unit in self.gas_actions:
            self.gas_actions[unit].setChecked(True)
        self.settings.setValue("units/gas", unit)
        if self.controller.plan is not None:
            stale = self.controller.stale
            self._show_plan(self.controller.plan)
            self._show_views(self.controller.plan)
            if stale:
                self._show_invalid(self.controller.errors)

    def _save_units(self) -> None:
        for key, unit in self.form.units().items():
            if key not in fs.GAS_FIELDS:
                self.settings.setValue(f"units/{key}", unit)
        self.settings.setValue("units/gas", self.form.gas_unit())

    def load_demo(self) -> bool:
        """Show the demo patient as a new, unsaved case (asking first when work would be lost)."""
        manager = getattr(self, "case_manager", None)
        if manager is not None:
            return manager.new_case(demo_request(self.library))
        self.controller.set_request(demo_request(self.library))
        return True

    def _find_species(self) -> None:
        self.form.species.setFocus()
        self.form.species.lineEdit().selectAll()

    def _go_to_problem(self) -> None:
        errors = self.controller.errors
        if errors:
            self.form.focus_field(fs.error_key(errors[0]) or "")

    # ------------------------------------------------------------------ appearance
    def set_theme(self, key: str) -> None:
        theme = THEMES.get(key, THEMES["day"])
        self.theme = theme
        app = QApplication.instance()
        if app is not None:
            apply_theme(app, theme)
        if self.styleSheet() != theme.window_style:
            self.setStyleSheet(theme.window_style)
        for w in (self.notice, self.status, self.settings_panel, self.cautions, self.form, *self.plot_cards):
            w.set_theme(theme)
        if self.controller.plan is not None:
            plan = self.controller.plan
            self.cautions.show_plan(plan, self.form.gas_unit())
            if self.controller.stale:
                self._show_invalid(self.controller.errors)
        if key in getattr(self, "theme_actions", {}):
            self.theme_actions[key].setChecked(True)
        self.settings.setValue("view/theme", theme.key)
        self.theme_changed.emit(theme)

    # ------------------------------------------------------------------ misc
    def copy_plan(self) -> str:
        plan = self.controller.plan
        if plan is None:
            return ""
        text = plan_to_text(plan, reader_units(self.form.gas_unit(), self.form.state[fs.UNIT + "mass"]))
        if self.controller.stale:
            text = "NOT CURRENT — " + first_error_text(self.controller.errors) + "\n\n" + text
        QGuiApplication.clipboard().setText(text)
        return text

    def show_acknowledgement(self) -> None:
        from ventset.gui.ack import AcknowledgementDialog

        AcknowledgementDialog(self, review=True).exec()

    def _restore(self) -> None:
        geo = self.settings.value("window/geometry")
        if isinstance(geo, QByteArray | bytes) and self.restoreGeometry(QByteArray(geo)):
            clamp_to_screen(self)  # remembered on another screen or at another scale
        else:
            self.resize(*first_size(self))
            w = self.width()
            form = min(self.form_width, int(w * 0.4))
            side = max(self.fontMetrics().averageCharWidth() * 30, int(w * 0.22))
            self.splitter.setSizes([form, w - form - side, side])
        for name, splitter in (("window/splitter", self.splitter),):
            state = self.settings.value(name)
            if isinstance(state, QByteArray | bytes):
                splitter.restoreState(QByteArray(state))

    def focusNextPrevChild(self, next: bool) -> bool:  # noqa: N802, A002 - Qt override
        """Tab and Shift+Tab through the panels in reading order (ventset.gui.access)."""
        from ventset.gui import access

        return access.move_focus(self, next) or super().focusNextPrevChild(next)

    def showEvent(self, event) -> None:  # noqa: N802 - Qt override
        super().showEvent(event)
        if not getattr(self, "_placed", False):  # the frame is known once shown: keep all of it on screen
            self._placed = True
            clamp_to_screen(self)

    def closeEvent(self, event) -> None:  # noqa: N802 - Qt override
        self.settings.setValue("window/geometry", self.saveGeometry())
        self.settings.setValue("window/splitter", self.splitter.saveState())
        self._save_units()
        self.settings.sync()
        super().closeEvent(event)

