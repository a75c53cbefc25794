"""Data: upload a shot log, see the row-level validation report, add it to the store.

A file is read with the canonical layout, a shipped mapping profile or an
uploaded profile file. "Check" reads it without storing; "Check and add"
stores it (the whole file, or only its good rows with "keep going"). Every
problem is reported as ``file:row:column: message``. The store's sources and
rejected rows are listed below.

The size limit is checked in the browser before anything is sent (a file
over the limit is never uploaded, and the page says so), and again on the
server.
"""

from __future__ import annotations

import base64
import binascii

from dash import Input, Output, State, callback_context, dash_table, dcc, html, no_update

from streakwise.ingest import InputError, load_profile, shipped_profiles

from . import ids
from .service import DashboardService

__all__ = [
    "CANONICAL",
    "NAME",
    "PATH",
    "TITLE",
    "UPLOADED",
    "decode_upload",
    "handle_upload",
    "layout",
    "register",
    "rejects_rows",
    "size_check_js",
    "size_text",
    "sources_rows",
]

NAME = "data"
PATH = "/data"
TITLE = "Data"

#: Profile choices besides the shipped profiles.
CANONICAL = "(canonical layout)"
UPLOADED = "(profile file uploaded below)"

SOURCE_COLUMNS = ["source_id", "name", "layout", "profile", "rows_read", "attempts", "skipped", "rejected", "ingested_at"]
REJECT_COLUMNS = ["source", "row", "column", "message"]


def size_text(size: int) -> str:
    """``52428800`` -> ``"50 MB"``, ``4096`` -> ``"4 KB"``."""
    if size >= 1024 * 1024:
        return f"{size / (1024 * 1024):.3g} MB"
    return f"{size / 1024:.3g} KB"


def size_check_js(limit_bytes: int) -> str:
    """Browser-side check of an upload's size (runs before anything is sent)."""
    return f"""
function(contents, filename) {{
    if (!contents) {{ return [null, ""]; }}
    var comma = contents.indexOf(",");
    var bytes = Math.floor((contents.length - comma - 1) * 3 / 4);
    if (bytes > {int(limit_bytes)}) {{
        var shown = bytes >= 1048576 ? (bytes / 1048576).toFixed(1) + " MB" : (bytes / 1024).toFixed(1) + " KB";
        return [null, filename + " is " + shown + ": the dashboard accepts files up to "
            + "{size_text(limit_bytes)}. Nothing was uploaded. Add larger files with `streakwise ingest FILE`."];
    }}
    return [{{"name": filename, "contents": contents}}, ""];
}}
"""


def _table(component_id: str, columns: list[str], rows: list[dict], page_size: int) -> dash_table.DataTable:
    return dash_table.DataTable(
        id=component_id,
        columns=[{"name": c.replace("_", " "), "id": c} for c in columns],
        data=rows,
        page_action="native",
        page_size=page_size,
        sort_action="native",
        style_table={"overflowX": "auto"},
        style_cell={"fontFamily": "system-ui, -apple-system, 'Segoe UI', Roboto, Arial, sans-serif", "fontSize": "14px", "padding": "4px 8px", "textAlign": "left",
                    "whiteSpace": "normal", "height": "auto"},
        style_header={"fontWeight": "600", "backgroundColor": "#f6f8fa"},
    )


def sources_rows(service: DashboardService) -> list[dict]:
    """The store's sources for the table."""
    return [
        {
            "source_id": int(row.source_id), "name": str(row.name), "layout": str(row.layout),
            "profile": str(row.profile) or "–", "rows_read": int(row.rows_read), "attempts": int(row.attempts),
            "skipped": int(row.skipped), "rejected": int(row.rejected), "ingested_at": str(row.ingested_at)[:19],
        }
        for row in service.store.sources().itertuples(index=False)
    ]


def rejects_rows(service: DashboardService) -> list[dict]:
    frame = service.store.rejects()
    rows = []
    for row in frame.to_dict("records"):
        rows.append({
            "source": str(row["source"]),
            "row": None if row["row"] is None or row["row"] != row["row"] else int(row["row"]),
            "column": None if row["column"] is None or row["column"] != row["column"] else str(row["column"]),
            "message": str(row["message"]),
        })
    return rows


def layout(service: DashboardService, params: dict[str, str]) -> html.Div:
    limit = size_text(service.settings.upload_limit_bytes)
    profiles = [{"label": "canonical layout (no profile)", "value": CANONICAL}]
    profiles += [{"label": f"shipped profile: {name}", "value": name} for name in shipped_profiles()]
    profiles += [{"label": "a profile file I upload", "value": UPLOADED}]
    return html.Div(
        [
            html.H1(TITLE),
            html.P(
                "Add a shot log to the store. Choose how its columns map to ours (the canonical layout, a shipped "
                "mapping profile, or a profile file of your own), check it, and add it. Every problem is reported "
                "with its place in the file as file:row:column.",
                className="sw-lead",
            ),
            html.Div(
                [
                    html.Div(
                        [
                            html.Label("Shot log", className="sw-label"),
                            dcc.Upload(
                                id=ids.DATA_UPLOAD,
                                children=html.Div(["Drop a file here or ", html.A("choose one"),
                                                   f" (CSV, Parquet, JSON lines or Excel; up to {limit})"]),
                                className="sw-upload",
                                multiple=False,
                            ),
                            html.Div(id=ids.DATA_UPLOAD_NAME, className="sw-note"),
                            html.Div(id=ids.DATA_UPLOAD_TOO_BIG, className="sw-error"),
                        ],
                        className="sw-control sw-wide",
                    ),
                    html.Div(
                        [
                            html.Label("Column mapping", className="sw-label"),
                            dcc.Dropdown(id=ids.DATA_PROFILE, options=profiles, value=CANONICAL, clearable=False),
                            dcc.Upload(id=ids.DATA_PROFILE_UPLOAD, children=html.Div(["Profile file (.toml): drop or ", html.A("choose")]),
                                       className="sw-upload", multiple=False),
                            html.Div(id=ids.DATA_PROFILE_NAME, className="sw-note"),
                        ],
                        className="sw-control sw-wide",
                    ),
                    html.Div(
                        [
                            dcc.Checklist(id=ids.DATA_KEEP_GOING, value=[], options=[
                                {"label": "keep going: store the good rows and list the bad ones as rejects", "value": "keep"}]),
                            html.Div([
                                html.Button("Check", id=ids.DATA_CHECK, className="sw-button sw-secondary", n_clicks=0),
                                " ",
                                html.Button("Check and add to the store", id=ids.DATA_INGEST, className="sw-button", n_clicks=0),
                            ]),
                        ],
                        className="sw-control",
                    ),
                ],
                className="sw-controls",
            ),
            dcc.Store(id=ids.DATA_UPLOAD_CHECKED),
            html.H2("Report"),
            dcc.Loading(html.Pre("Choose a file and press Check.", id=ids.DATA_REPORT, className="sw-report"), delay_show=300),
            html.H2("Sources in the store"),
            _table(ids.DATA_SOURCES, SOURCE_COLUMNS, sources_rows(service), 10),
            html.H2("Rejected rows"),
            html.P("Rows a file could not use, kept with the reason when a file was added with 'keep going'.", className="sw-note"),
            _table(ids.DATA_REJECTS, REJECT_COLUMNS, rejects_rows(service), 15),
        ]
    )


# -- pure helpers ----------------------------------------------------------------


def decode_upload(contents: str) -> bytes:
    """The bytes of a ``data:...;base64,...`` upload (ValueError if it is not one)."""
    if not contents or "," not in contents:
        raise ValueError("the upload is empty")
    try:
        return base64.b64decode(contents.split(",", 1)[1], validate=False)
    except (binascii.Error, ValueError) as exc:
        raise ValueError(f"the upload could not be read: {exc}") from None


def handle_upload(service: DashboardService, action: str, upload: dict | None, profile_choice: str | None,
                  profile_contents: str | None, profile_name: str | None, keep_going: bool) -> tuple[str, list, list]:
    """The callback's work: (report text, sources rows, rejects rows)."""
    def answer(lines):
        return "\n".join(lines), sources_rows(service), rejects_rows(service)

    if not upload or not upload.get("contents"):
        return answer(["Choose a file first."])
    name = upload.get("name") or "upload"
    try:
        content = decode_upload(upload["contents"])
    except ValueError as exc:
        return answer([f"{name}: {exc}"])
    if len(content) > service.settings.upload_limit_bytes:
        limit = size_text(service.settings.upload_limit_bytes)
        return answer([f"{name}: {size_text(len(content))} is over the dashboard's limit of {limit}; nothing was stored. "
                       "Add larger files with `streakwise ingest FILE`."])
    try:
        if profile_choice in (None, CANONICAL):
            profile = None
        elif profile_choice == UPLOADED:
            if not profile_contents:
                return answer(["Upload a profile file, or choose another mapping."])
            profile = service.parse_uploaded_profile(profile_name or "profile.toml", decode_upload(profile_contents))
        else:
            profile = load_profile(profile_choice)
    except InputError as exc:
        return answer(["The profile cannot be used:", *[str(p) for p in exc.problems]])
    except ValueError as exc:
        return answer([f"The profile cannot be used: {exc}"])
    report = service.ingest_bytes(name, content, profile, keep_going=keep_going, store=action == "store")
    return answer(list(report.lines))


def register(app, service: DashboardService) -> None:
    app.clientside_callback(
        size_check_js(service.settings.upload_limit_bytes),
        Output(ids.DATA_UPLOAD_CHECKED, "data"),
        Output(ids.DATA_UPLOAD_TOO_BIG, "children"),
        Input(ids.DATA_UPLOAD, "contents"),
        State(ids.DATA_UPLOAD, "filename"),
        prevent_initial_call=True,
    )

    @app.callback(
        Output(ids.DATA_UPLOAD_NAME, "children"),
        Input(ids.DATA_UPLOAD, "filename"),
        prevent_initial_call=True,
    )
    def _name(filename):
        return f"Chosen: {filename}" if filename else ""

    @app.callback(
        Output(ids.DATA_PROFILE_NAME, "children"),
        Output(ids.DATA_PROFILE, "value"),
        Input(ids.DATA_PROFILE_UPLOAD, "filename"),
        prevent_initial_call=True,
    )
    def _profile_name(filename):
        return (f"Profile file: {filename}", UPLOADED) if filename else ("", CANONICAL)

    @app.callback(
        Output(ids.DATA_REPORT, "children"),
        Output(ids.DATA_SOURCES, "data"),
        Output(ids.DATA_REJECTS, "data"),
        Input(ids.DATA_CHECK, "n_clicks"),
        Input(ids.DATA_INGEST, "n_clicks"),
        State(ids.DATA_UPLOAD_CHECKED, "data"),
        State(ids.DATA_PROFILE, "value"),
        State(ids.DATA_PROFILE_UPLOAD, "contents"),
        State(ids.DATA_PROFILE_UPLOAD, "filename"),
        State(ids.DATA_KEEP_GOING, "value"),
        prevent_initial_call=True,
    )
    def _act(check_clicks, ingest_clicks, upload, profile_choice, profile_contents, profile_name, keep):
        if not (check_clicks or ingest_clicks):
            return no_update, no_update, no_update
        action = "store" if callback_context.triggered_id == ids.DATA_INGEST else "check"
        return handle_upload(service, action, upload, profile_choice, profile_contents, profile_name, "keep" in (keep or []))
