/* Earshot's one script: small things htmx swaps would otherwise undo. Loaded from this site under the page's
   CSP nonce; every page works without it.

   1. Keyboard focus. A questionnaire section is redrawn after a row action, a preset or a change of the
      category (its inputs are disabled meanwhile, so the browser drops the focus to the page's top). After
      the swap the focus goes where the server says (data-focus on the section: the new row's name, the Undo
      button), else back to the element that had it (same id, or the same button by name and value), unless
      the person has moved it elsewhere meanwhile.
   2. Findings opened stay open. The checklist is replaced on every save; <details> a person opened are
      opened again in the new copy (matched by id).
   3. Times in the reader's own time zone. <time datetime="...Z" data-local-time> shows UTC without a
      script; here it is rewritten in the browser's time zone: the time of day (a save), or with
      data-local-time="date-time" the date, the time and the zone's short name (a notice, a comment).
*/
(function () {
  "use strict";

  // -- 1. focus --------------------------------------------------------------------------------------------
  var lastFocus = null; // {id, name, value} of the last element that had the focus in a section

  function describe(element) {
    if (!element || element === document.body || !element.closest || !element.closest("form.qsection")) return null;
    return {id: element.id || "", name: element.getAttribute("name") || "", value: element.getAttribute("value") || ""};
  }

  document.addEventListener("focusin", function (event) {
    var seen = describe(event.target);
    if (seen) lastFocus = seen;
  });

  function findAgain(form, seen) {
    if (!seen) return null;
    if (seen.id) {
      var byId = document.getElementById(seen.id);
      if (byId && form.contains(byId)) return byId;
    }
    if (seen.name) {
      var candidates = form.querySelectorAll("button[name], input[type=submit][name]");
      for (var i = 0; i < candidates.length; i++) {
        if (candidates[i].getAttribute("name") === seen.name && candidates[i].getAttribute("value") === seen.value) {
          return candidates[i];
        }
      }
    }
    return null;
  }

  function focusIsLost() {
    var active = document.activeElement;
    return !active || active === document.body || !document.body.contains(active);
  }

  function restoreFocus() {
    var form = document.querySelector("form.qsection[data-focus]");
    var hinted = form ? form.getAttribute("data-focus") : "";
    if (form) form.removeAttribute("data-focus"); // a hint is used once
    if (!focusIsLost()) return; // the person moved on: leave the focus where they put it
    var target = hinted ? document.getElementById(hinted) : null;
    if (!target && lastFocus) {
      var forms = document.querySelectorAll("form.qsection");
      for (var i = 0; i < forms.length && !target; i++) target = findAgain(forms[i], lastFocus);
    }
    if (target) target.focus();
  }

  // -- 2. open findings --------------------------------------------------------------------------------------
  var openFindings = new Set();

  document.addEventListener("toggle", function (event) {
    var details = event.target;
    if (!(details instanceof HTMLDetailsElement) || !details.id || !details.classList.contains("finding")) return;
    if (details.open) openFindings.add(details.id); else openFindings.delete(details.id);
  }, true); // toggle does not bubble: listen while it is captured

  function reopenFindings(root) {
    openFindings.forEach(function (id) {
      var details = document.getElementById(id);
      if (details && !details.open && (!root || root.contains(details))) details.open = true;
    });
  }

  // -- 3. local times ----------------------------------------------------------------------------------------
  function twoDigits(number) { return (number < 10 ? "0" : "") + number; }

  function dateAndTime(moment) {
    var zone = "";
    try {
      var parts = new Intl.DateTimeFormat([], {timeZoneName: "short"}).formatToParts(moment);
      for (var i = 0; i < parts.length; i++) if (parts[i].type === "timeZoneName") zone = " " + parts[i].value;
    } catch (error) { zone = ""; }
    return moment.getFullYear() + "-" + twoDigits(moment.getMonth() + 1) + "-" + twoDigits(moment.getDate()) + " " +
      twoDigits(moment.getHours()) + ":" + twoDigits(moment.getMinutes()) + zone;
  }

  function localTimes(root) {
    var times = (root || document).querySelectorAll("time[data-local-time]");
    for (var i = 0; i < times.length; i++) {
      var moment = new Date(times[i].getAttribute("datetime"));
      if (isNaN(moment.getTime())) continue;
      var utc = times[i].textContent;
      times[i].textContent = times[i].getAttribute("data-local-time") === "date-time"
        ? dateAndTime(moment)
        : moment.toLocaleTimeString([], {hour: "2-digit", minute: "2-digit", second: "2-digit"});
      times[i].setAttribute("title", utc.trim());
      times[i].removeAttribute("data-local-time");
    }
  }

  // -- wiring ------------------------------------------------------------------------------------------------
  document.addEventListener("htmx:afterSettle", function (event) {
    restoreFocus();
    reopenFindings(null);
    localTimes(null);
  });
  document.addEventListener("htmx:oobAfterSwap", function () {
    reopenFindings(null);
    localTimes(null);
  });
  document.addEventListener("DOMContentLoaded", function () {
    localTimes(null);
  });
})();
