app_name = "care"
urlpatterns = []
