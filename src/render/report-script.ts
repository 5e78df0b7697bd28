/**
 * The report's only script: filters and pages each table's changed cells from its embedded JSON, and
 * lets an audit-trail entry show the cells its correction changed. Rows are built with textContent,
 * never markup, so a value is always shown as text. Without it the page still shows the first page of
 * every diff, statically rendered.
 *
 * Embedded cell: [key, column index, old as shown, new as shown, correction index or -1].
 */
export const REPORT_SCRIPT = `(function () {
  'use strict';
  var PAGE = Number(document.body.getAttribute('data-page-size')) || 50;
  function all(root, selector) { return Array.prototype.slice.call(root.querySelectorAll(selector)); }
  function cellTd(text, className, symbol) {
    var td = document.createElement('td');
    if (className) td.className = className;
    if (symbol) {
      var mark = document.createElement('span');
      mark.setAttribute('aria-hidden', 'true');
      mark.className = 'mark';
      mark.textContent = symbol;
      td.appendChild(mark);
    }
    td.appendChild(document.createTextNode(text));
    return td;
  }
  all(document, 'section.diff[data-cells]').forEach(function (section) {
    var data = JSON.parse(document.getElementById(section.getAttribute('data-cells')).textContent);
    var form = section.querySelector('form.filters');
    var body = section.querySelector('tbody');
    var column = form.querySelector('select[name=column]');
    var correction = form.querySelector('select[name=correction]');
    var key = form.querySelector('input[name=key]');
    var status = section.querySelector('.diff-status');
    var prev = form.querySelector('button[data-page=prev]');
    var next = form.querySelector('button[data-page=next]');
    var rows = data.cells;
    var page = 0;
    function draw() {
      var start = page * PAGE;
      var shown = rows.slice(start, start + PAGE);
      var fragment = document.createDocumentFragment();
      shown.forEach(function (cell) {
        var tr = document.createElement('tr');
        tr.setAttribute('data-column', data.columns[cell[1]]);
        var th = document.createElement('th');
        th.scope = 'row';
        th.textContent = cell[0];
        tr.appendChild(th);
        tr.appendChild(cellTd(data.columns[cell[1]]));
        tr.appendChild(cellTd(cell[2], 'old', '\\u2212 '));
        tr.appendChild(cellTd(cell[3], 'new', '+ '));
        if (data.attributed) tr.appendChild(cellTd(cell[4] < 0 ? '\\u2014' : data.corrections[cell[4]]));
        fragment.appendChild(tr);
      });
      while (body.firstChild) body.removeChild(body.firstChild);
      body.appendChild(fragment);
      status.textContent = rows.length === 0
        ? 'No embedded changed cell matches these filters.'
        : 'Showing ' + (start + 1) + '\\u2013' + (start + shown.length) + ' of ' + rows.length + ' matching changed cells.';
      prev.disabled = page === 0;
      next.disabled = start + PAGE >= rows.length;
    }
    function filter() {
      var c = column.value;
      var r = correction ? correction.value : '';
      var k = key.value.trim().toLowerCase();
      rows = data.cells.filter(function (cell) {
        if (c !== '' && data.columns[cell[1]] !== c) return false;
        if (r === '-' && cell[4] >= 0) return false;
        if (r !== '' && r !== '-' && data.corrections[cell[4]] !== r) return false;
        return k === '' || cell[0].toLowerCase().indexOf(k) >= 0;
      });
      page = 0;
      draw();
    }
    form.addEventListener('submit', function (event) { event.preventDefault(); });
    column.addEventListener('change', filter);
    if (correction) correction.addEventListener('change', filter);
    key.addEventListener('input', filter);
    prev.addEventListener('click', function () { if (page > 0) { page -= 1; draw(); } });
    next.addEventListener('click', function () { if ((page + 1) * PAGE < rows.length) { page += 1; draw(); } });
    form.hidden = false;
    draw();
  });
  all(document, 'a[data-show-correction]').forEach(function (link) {
    link.addEventListener('click', function () {
      var section = document.getElementById(link.getAttribute('href').slice(1));
      var select = section && section.querySelector('select[name=correction]');
      if (!select) return;
      select.value = link.getAttribute('data-show-correction');
      select.dispatchEvent(new Event('change'));
    });
  });
})();
`;
