from django.contrib import admin
from django.contrib.auth import views as auth_views
from django.urls import include, path

from hazards.web import auth as web_auth
from hazards.web import views as web

urlpatterns = [
    path("healthz", web.healthz, name="healthz"),
    # One place to sign in (with the lockout): the admin's login form redirects there.
    path("admin/login/", web_auth.admin_login, name="admin-login-redirect"),
    path("admin/", admin.site.urls),
    # The one-time link a person gets to set their own password (hazards.admin_users).
    path("reset/<uidb64>/<token>/", auth_views.PasswordResetConfirmView.as_view(),
         name="password_reset_confirm"),
    path("reset/done/", auth_views.PasswordResetCompleteView.as_view(),
         name="password_reset_complete"),
    path("api/v1/", include("hazards.api.urls")),
    path("", include("hazards.web.urls")),
]
