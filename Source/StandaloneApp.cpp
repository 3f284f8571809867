// Kerf's standalone application: JUCE's standalone window around the processor, with the
// audio input live on first start. Kerf is an effect: muting the input by default (JUCE's
// choice, aimed at instruments and feedback loops) would leave a live rig silent. The
// output protection stays on by default, and the user's own mute choice is remembered.
#include <juce_audio_utils/juce_audio_utils.h>

#if JucePlugin_Build_Standalone && JUCE_USE_CUSTOM_PLUGIN_STANDALONE_APP

#include <juce_audio_plugin_client/Standalone/juce_StandaloneFilterWindow.h>

namespace kerf
{

/// The JUCE standalone app, with the input unmuted unless the user muted it before.
class StandaloneApp : public juce::JUCEApplication
{
public:
    StandaloneApp()
    {
        juce::PropertiesFile::Options options;
        options.applicationName = getApplicationName();
        options.filenameSuffix = ".settings";
        options.folderName = "~/.config";
        appProperties.setStorageParameters(options);
    }

    const juce::String getApplicationName() override { return JucePlugin_Name; }
    const juce::String getApplicationVersion() override { return JucePlugin_VersionString; }
    bool moreThanOneInstanceAllowed() override { return true; }
    void anotherInstanceStarted(const juce::String&) override {}

    void initialise(const juce::String&) override
    {
        auto* settings = appProperties.getUserSettings();
        const bool firstStart = !settings->containsKey("shouldMuteInput");
        window = std::make_unique<juce::StandaloneFilterWindow>(
            getApplicationName(),
            juce::LookAndFeel::getDefaultLookAndFeel().findColour(
                juce::ResizableWindow::backgroundColourId),
            settings, false);
        if (firstStart)
            window->getPluginHolder()->getMuteInputValue().setValue(false);
        window->setVisible(true);
    }

    void shutdown() override
    {
        window = nullptr;
        appProperties.saveIfNeeded();
    }

    void systemRequestedQuit() override
    {
        if (window != nullptr)
            window->pluginHolder->savePluginState();
        quit();
    }

private:
    juce::ApplicationProperties appProperties;
    std::unique_ptr<juce::StandaloneFilterWindow> window;
};

} // namespace kerf

juce::JUCEApplicationBase* juce_CreateApplication()
{
    return new kerf::StandaloneApp();
}

#endif
