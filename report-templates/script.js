// Offline downloads of the numbers behind each figure: the data sit in this page as JSON and
// are handed to the browser as a Blob (no request leaves the page).
document.addEventListener('click', function (ev) {
  var b = ev.target && ev.target.closest ? ev.target.closest('button.dl') : null;
  if (!b) return;
  var src = document.getElementById(b.getAttribute('data-source'));
  if (!src) return;
  var blob = new Blob([src.textContent], { type: 'application/json' });
  var a = document.createElement('a');
  a.href = URL.createObjectURL(blob);
  a.download = b.getAttribute('data-name');
  document.body.appendChild(a);
  a.click();
  setTimeout(function () { URL.revokeObjectURL(a.href); a.remove(); }, 0);
});
