from django.contrib.auth import views as auth_views
from django.templatetags.static import static
from django.urls import path, reverse_lazy
from django.views.generic import RedirectView

from . import views

app_name = "accounts"
urlpatterns = [
    path("", views.home, name="home"),
    path("healthz", views.healthz, name="healthz"),
    # Browsers ask for /favicon.ico on pages without an icon link (the admin, old clients).
    path(
        "favicon.ico",
        RedirectView.as_view(url=static("favicon.svg"), permanent=True, query_string=False),
        name="favicon",
    ),
    path(
        "login/",
        auth_views.LoginView.as_view(template_name="accounts/login.html"),
        name="login",
    ),
    path("logout/", auth_views.LogoutView.as_view(), name="logout"),
    path(
        "password/",
        auth_views.PasswordChangeView.as_view(
            template_name="accounts/password_change.html",
            success_url=reverse_lazy("accounts:password_change_done"),
        ),
        name="password_change",
    ),
    path(
        "password/done/",
        auth_views.PasswordChangeDoneView.as_view(
            template_name="accounts/password_change_done.html"
        ),
        name="password_change_done",
    ),
    path("unlock/", views.unlock, name="unlock"),
]
