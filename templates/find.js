/* cardgen: find a rider on a route page. Hides the rows of the riders' table that
   do not contain what is typed. Without JavaScript the box stays hidden and every
   row shows. */
(function () {
  var box = document.getElementById("find");
  var table = document.getElementById("rider-table");
  if (!box || !table) {
    return;
  }
  var rows = table.querySelectorAll("tbody tr");
  box.parentNode.hidden = false;
  box.addEventListener("input", function () {
    var want = box.value.trim().toLowerCase();
    rows.forEach(function (row) {
      row.hidden = want !== "" && row.textContent.toLowerCase().indexOf(want) < 0;
    });
  });
})();
