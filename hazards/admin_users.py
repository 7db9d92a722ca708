"""People in the admin: nobody sets another person's password (issue 18 item 2).

An administrator who could set a password could sign as that person. So the admin's
set-password page refuses every account but one's own (which goes to the change form that
asks for the current password), a new account gets no usable password, and a reset is a
one-time link (Django's token, void once used or once the password changes) e-mailed to the
person, never shown to the administrator. Every change to people, groups and permissions
reaches the audit trail (hazards.models.identity).
"""

from __future__ import annotations

from urllib.parse import urlsplit

from django import forms
from django.conf import settings
from django.contrib import admin, messages
from django.contrib.auth.admin import UserAdmin
from django.contrib.auth.forms import PasswordResetForm
from django.contrib.auth.models import User
from django.contrib.auth.tokens import default_token_generator
from django.core.exceptions import PermissionDenied
from django.shortcuts import redirect
from django.utils.encoding import force_bytes
from django.utils.http import urlsafe_base64_encode

NOT_YOUR_PASSWORD = (
    "Nobody sets another person's password, administrators included: send "
    "them a one-time reset link instead (action on the list of users)."
)
NO_EMAIL = "{user} has no e-mail address: add one, then send the reset link."
LINK_SENT = "A one-time reset link was e-mailed to {count} person(s); it is not shown here."


class NewPersonForm(forms.ModelForm):
    """A new account without a password: the person sets one through the reset link."""

    class Meta:
        model = User
        fields = ["username", "first_name", "last_name", "email"]

    def save(self, commit=True):
        user = super().save(commit=False)
        user.set_unusable_password()
        if commit:
            user.save()
        return user


def send_reset_link(user, *, request=None) -> None:
    """E-mail `user` a one-time link to set their password (EXOLEDGER_BASE_URL)."""
    base = urlsplit(settings.EXOLEDGER_BASE_URL)
    context = {
        "email": user.email,
        "domain": base.netloc,
        "site_name": "Exoledger",
        "uid": urlsafe_base64_encode(force_bytes(user.pk)),
        "user": user,
        "token": default_token_generator.make_token(user),
        "protocol": base.scheme or "https",
    }
    PasswordResetForm().send_mail(
        "registration/password_reset_subject.txt",
        "registration/password_reset_email.html",
        context,
        None,
        user.email,
    )


class PersonAdmin(UserAdmin):
    add_form = NewPersonForm
    add_form_template = None
    add_fieldsets = ((None, {"fields": ("username", "first_name", "last_name", "email")}),)
    actions = ["send_password_reset"]

    def user_change_password(self, request, id, form_url=""):
        if str(request.user.pk) == str(id):
            return redirect("admin:password_change")
        raise PermissionDenied(NOT_YOUR_PASSWORD)

    def save_model(self, request, obj, form, change):
        super().save_model(request, obj, form, change)
        if not change and obj.email:
            send_reset_link(obj, request=request)
            self.message_user(request, LINK_SENT.format(count=1))

    @admin.action(description="E-mail a one-time password reset link", permissions=["change"])
    def send_password_reset(self, request, queryset):
        sent = 0
        for user in queryset:
            if not user.email:
                self.message_user(
                    request, NO_EMAIL.format(user=user.username), level=messages.WARNING
                )
                continue
            send_reset_link(user, request=request)
            sent += 1
        if sent:
            self.message_user(request, LINK_SENT.format(count=sent))


admin.site.unregister(User)
admin.site.register(User, PersonAdmin)
