document.getElementById('page');
