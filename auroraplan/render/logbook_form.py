"""The logbook form on the guide's run sheet: what was seen tonight, kept on the phone offline.

The form is one HTML fragment with its own few lines of script. Entries are kept in the
browser's localStorage (no signal needed, they survive closing the page) and leave the
phone only as a file: "export" builds the logbook CSV file (columns and levels from
:mod:`auroraplan.logbook`, so `auroraplan logbook import` reads it as it is) in a Blob and
hands it to an ``<a download>`` link. Nothing is sent anywhere.

The page's own CSS variables colour it, so the day and night colours, the 16 px text and
the contrast of the rest of the page hold here too.
"""

from __future__ import annotations

import json

from auroraplan.escape import FORMULA_STARTS
from auroraplan.i18n import Words
from auroraplan.logbook import AURORA_LEVELS, COLUMNS, MAX_TEXT
from auroraplan.names import safe_name
from auroraplan.render.style import html_escape as _e

STORE_KEY = "auroraplan-logbook"
"""localStorage key: a JSON list of entries, each a dict keyed by the logbook's columns.
Every run sheet saved on the same phone shares it, so one export carries every night not
yet handed in; importing an entry twice keeps it once."""

LEVEL_LABELS = {"none": "None", "faint": "Faint", "clear": "Clear", "strong": "Strong"}
"""Button words for :data:`auroraplan.logbook.AURORA_LEVELS`."""

CSS = """
details.log>summary{margin:.6rem 0}
form.log label{display:block;margin:.5rem 0 .2rem;font-weight:600}
form.log input,form.log select,form.log textarea{display:block;width:100%;min-height:44px;
margin-top:.2rem;padding:8px 10px;font:inherit;font-weight:400;color:var(--ink);
background:var(--paper);border:2px solid var(--ink);border-radius:6px}
form.log fieldset{border:0;padding:0;margin:.5rem 0}
form.log legend{font-weight:600;padding:0;margin-bottom:.2rem}
form.log .levels{display:grid;grid-template-columns:1fr 1fr;gap:8px}
form.log .levels label{margin:0;min-height:52px;display:flex;align-items:center;
justify-content:center;border:2px solid var(--ink);border-radius:6px;font-size:1.1rem;
cursor:pointer;position:relative}
form.log .levels input{position:absolute;width:1px;height:1px;min-height:0;margin:0;padding:0;
border:0;opacity:0}
form.log .levels label:has(input:checked){background:var(--ink);color:var(--paper)}
form.log .levels label:has(input:focus-visible){outline:3px solid var(--accent);outline-offset:2px}
form.log .pair{display:flex;gap:8px}
form.log .pair label{flex:1}
ul.saved{padding-left:1.2rem;margin:.4rem 0}
html.night form.log input,html.night form.log select{color-scheme:dark}
"""

SCRIPT = (
    "<script>(function(){var f=document.getElementById('log-form');if(!f)return;"
    "var K=f.getAttribute('data-key'),cols=JSON.parse(f.getAttribute('data-columns')),"
    "st=document.getElementById('log-status'),ul=document.getElementById('log-saved');"
    "function msg(k){return f.getAttribute('data-'+k);}"
    "function load(){try{return JSON.parse(localStorage.getItem(K)||'[]');}catch(e){return[];}}"
    "function word(v){var i=f.querySelector('input[name=aurora][value=\"'+v+'\"]');"
    "return i?i.parentNode.textContent:v;}"
    "function show(){var a=load();ul.textContent='';a.forEach(function(r){"
    "var li=document.createElement('li');li.textContent=[r.night,r.site,word(r.aurora),"
    "r.hours_out,r.cloud_seen===''?'':r.cloud_seen+' %'].filter(Boolean).join(' · ');"
    "ul.appendChild(li);});document.getElementById('log-count').textContent="
    "a.length?msg('count').replace('{n}',a.length):msg('empty');}"
    "f.addEventListener('submit',function(ev){ev.preventDefault();var e=f.elements,"
    "lvl=f.querySelector('input[name=aurora]:checked');"
    "if(!lvl){st.textContent=msg('need-aurora');return;}"
    "var h0=e.out_from.value,h1=e.out_until.value,span='';"
    "if(h0||h1){if(!h0||!h1||h0===h1){st.textContent=msg('need-hours');return;}"
    "span=h0+'-'+h1;}"
    "var r={site:e.site.value,night:e.night.value,aurora:lvl.value,hours_out:span,"
    "cloud_seen:e.cloud_seen.value,note:e.note.value.trim(),source:msg('source')},a=load();"
    "a.push(r);try{localStorage.setItem(K,JSON.stringify(a));}"
    "catch(x){st.textContent=msg('full');return;}"
    "lvl.checked=false;e.note.value='';st.textContent=msg('saved');show();});"
    "document.getElementById('log-export').addEventListener('click',function(){var a=load();"
    "if(!a.length){st.textContent=msg('empty');return;}"
    "function q(v){v=v==null?'':String(v);if(v&&JSON.parse(msg('formula')).indexOf(v.charAt(0))>=0)v=\"'\"+v;"
    "return/[\",\\r\\n]/.test(v)?'\"'+v.replace(/\"/g,'\"\"')+'\"':v;}"
    "var t=[cols.join(',')].concat(a.map(function(r){return cols.map(function(c){"
    "return q(r[c]);}).join(',');})).join('\\r\\n')+'\\r\\n',"
    "u=URL.createObjectURL(new Blob([t],{type:'text/csv;charset=utf-8'})),"
    "l=document.createElement('a');l.href=u;l.download=msg('file');"
    "document.body.appendChild(l);l.click();l.remove();"
    "setTimeout(function(){URL.revokeObjectURL(u);},6e4);"
    "st.textContent=msg('exported');});show();})();</script>"
)


def _site_options(sheet: dict, report: dict) -> str:
    """The group's site first (chosen), its backup next, then every other open site."""
    first = [sheet.get("site_name"),
             sheet.get("backup_name") or (sheet.get("backup") or {}).get("name")]
    names = [n for n in first if n]
    names += sorted(s["name"] for s in report.get("sites") or [] if s.get("name") not in names)
    return "".join(f'<option{" selected" if i == 0 else ""}>{_e(n)}</option>'
                   for i, n in enumerate(dict.fromkeys(names)))


def logbook_form_html(sheet: dict, report: dict, words: Words) -> str:
    """The collapsed logbook form for one group's run sheet.

    Parameters
    ----------
    sheet : dict
        :func:`auroraplan.runsheet.run_sheet` (the group's site, backup and trip).
    report : dict
        The ``tonight`` report of the same night: its ``date`` is the night's date and its
        sites are the other choices.
    words : Words
        The page's language.

    Returns
    -------
    str
        A ``<details id="logbook">`` element holding the form, the list of entries kept on
        the phone, the export button and the script; no outside resources.
    """
    w = words
    levels = "".join(
        f'<label><input type="radio" name="aurora" value="{_e(level)}">'
        f"<span>{_e(w(LEVEL_LABELS[level]))}</span></label>" for level in AURORA_LEVELS)
    trip = sheet.get("trip", "")
    night = report.get("date", "")
    data = {
        "key": STORE_KEY,
        "columns": json.dumps(list(COLUMNS)),
        "source": f"run sheet {trip}".strip(),
        "file": f"logbook-{safe_name(trip, 'trip')}-{night}.csv" if trip else f"logbook-{night}.csv",
        # First characters of a cell a spreadsheet would run (auroraplan.escape).
        "formula": json.dumps(list(FORMULA_STARTS)),
        "count": w("{n} entries kept on this phone"),
        "empty": w("No entries kept on this phone yet."),
        "saved": w("Saved on this phone."),
        "exported": w("Logbook file made; hand it to the office for import."),
        "need-aurora": w("Choose what was seen first."),
        "need-hours": w("Give both times out, or neither."),
        "full": w("This phone would not keep the entry; write it down instead."),
    }
    attrs = "".join(f' data-{k}="{_e(v)}"' for k, v in data.items())
    return (
        '<details class="log" id="logbook">'
        f"<summary>{_e(w('Logbook: what you saw'))}</summary>"
        f'<form class="log" id="log-form" autocomplete="off"{attrs}>'
        f'<label>{_e(w("Site"))}<select name="site">{_site_options(sheet, report)}</select></label>'
        f'<label>{_e(w("Night"))}<input type="date" name="night" required value="{_e(night)}">'
        "</label>"
        f'<fieldset><legend>{_e(w("Aurora seen"))}</legend><div class="levels">{levels}</div>'
        "</fieldset>"
        f'<label>{_e(w("Cloud seen, % of the sky"))}<input type="number" name="cloud_seen" '
        'min="0" max="100" step="1" inputmode="numeric"></label>'
        f'<div class="pair"><label>{_e(w("Out from"))}<input type="time" name="out_from"></label>'
        f'<label>{_e(w("until"))}<input type="time" name="out_until"></label></div>'
        f'<label>{_e(w("Note"))}<textarea name="note" rows="2" maxlength="{MAX_TEXT}"></textarea></label>'
        f'<div class="bar"><button type="submit" id="log-save">{_e(w("Save entry"))}</button>'
        f'<button type="button" id="log-export">{_e(w("Export logbook file"))}</button></div>'
        '<p id="log-status" role="status"></p>'
        f'<p class="facts" id="log-count">{_e(w("No entries kept on this phone yet."))}</p>'
        '<ul class="saved" id="log-saved"></ul>'
        "</form>"
        f"{SCRIPT}</details>"
    )
