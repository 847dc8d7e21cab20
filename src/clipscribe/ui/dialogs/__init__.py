"""Windows and dialogs outside the two main views: the start window, the login, project set-up
(labels, videos, people), the dataset export and the help sheets."""
