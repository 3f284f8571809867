// Kerf's standalone application: JUCE's standalone window around the processor, with the
// audio input live on first start. Kerf is an effect: muting the input by default (JUCE's
// choice, aimed at instruments and feedback loops) would leave a live rig silent. The
// output protection stays on by default, and the user's own mute choice is remembered.
// An "All flat" button sits in the title bar beside Options, always in reach on a live rig;
// Ctrl+Z and Ctrl+Shift+Z undo and redo. `--screenshot PATH` writes a PNG of the window once
// it is on screen and quits (the Xvfb test's artefact).
#include "PluginProcessor.h"
#include "UserPresets.h"

#include <juce_audio_utils/juce_audio_utils.h>

#include <cstdio>

#if JucePlugin_Build_Standalone && JUCE_USE_CUSTOM_PLUGIN_STANDALONE_APP

#include <juce_audio_plugin_client/Standalone/juce_StandaloneFilterWindow.h>

namespace kerf
{

/// JUCE's standalone window with an "All flat" button (Ctrl+0) in its title bar: every
/// section, comb and echo stage off at once (KerfProcessor::setAllFlat; one undo step).
class StandaloneWindow : public juce::StandaloneFilterWindow
{
public:
    StandaloneWindow(const juce::String& title, juce::Colour background,
                     juce::PropertySet* settings)
        : juce::StandaloneFilterWindow(title, background, settings, false)
    {
        flatButton.setTooltip("Switch every section, comb and echo stage off (Ctrl+0); "
                              "output gain and protection stay as they are");
        flatButton.addShortcut(juce::KeyPress('0', juce::ModifierKeys::commandModifier, 0));
        flatButton.onClick = [this]
        {
            if (auto* kerfProcessor = dynamic_cast<KerfProcessor*>(getAudioProcessor()))
                kerfProcessor->setAllFlat();
        };
        juce::Component::addAndMakeVisible(flatButton);
        resized();
    }

    /// Ctrl+Z undoes the last edit, Ctrl+Shift+Z (or Ctrl+Y) redoes it (KerfProcessor).
    bool keyPressed(const juce::KeyPress& key) override
    {
        auto* kerfProcessor = dynamic_cast<KerfProcessor*>(getAudioProcessor());
        if (kerfProcessor == nullptr)
            return false;
        const auto command = juce::ModifierKeys::commandModifier;
        if (key == juce::KeyPress('z', command, 0))
        {
            kerfProcessor->undo();
            return true;
        }
        if (key == juce::KeyPress('z', command | juce::ModifierKeys::shiftModifier, 0) ||
            key == juce::KeyPress('y', command, 0))
        {
            kerfProcessor->redo();
            return true;
        }
        return juce::StandaloneFilterWindow::keyPressed(key);
    }

    void resized() override
    {
        juce::StandaloneFilterWindow::resized();
        // Beside JUCE's Options button (8, 6, 60 wide).
        flatButton.setBounds(72, 6, 70, juce::jmax(0, getTitleBarHeight() - 8));
    }

private:
    juce::TextButton flatButton{"All flat"};
};

/// The JUCE standalone app, with the input unmuted unless the user muted it before.
class StandaloneApp : public juce::JUCEApplication
{
public:
    StandaloneApp()
    {
        juce::PropertiesFile::Options options;
        options.applicationName = getApplicationName();
        options.filenameSuffix = ".settings";
        // $XDG_CONFIG_HOME/kerf/Kerf.settings (beside the user presets); an absolute
        // folder name is used as it is.
        options.folderName = kerfConfigFolder().getFullPathName();
        if (const auto note = setAsideUnplainSettings(options.getDefaultFile()); note.isNotEmpty())
            std::fprintf(stderr, "%s\n", note.toRawUTF8());
        appProperties.setStorageParameters(options);
    }

    const juce::String getApplicationName() override { return JucePlugin_Name; }
    const juce::String getApplicationVersion() override { return JucePlugin_VersionString; }
    bool moreThanOneInstanceAllowed() override { return true; }
    void anotherInstanceStarted(const juce::String&) override {}

    void initialise(const juce::String& commandLine) override
    {
        auto* settings = appProperties.getUserSettings();
        const bool firstStart = !settings->containsKey("shouldMuteInput");
        window = std::make_unique<StandaloneWindow>(
            getApplicationName(),
            juce::LookAndFeel::getDefaultLookAndFeel().findColour(
                juce::ResizableWindow::backgroundColourId),
            settings);
        if (firstStart)
            window->getPluginHolder()->getMuteInputValue().setValue(false);
        window->setVisible(true);
        const auto args = juce::StringArray::fromTokens(commandLine, true);
        const int at = args.indexOf("--screenshot");
        if (at >= 0)
        {
            const auto path = args[at + 1].unquoted();
            if (path.isEmpty())
            {
                std::fprintf(stderr, "Kerf: --screenshot needs a file name\n");
                setApplicationReturnValue(2);
                quit();
                return;
            }
            screenshot = std::make_unique<Screenshot>(
                *this, juce::File::getCurrentWorkingDirectory().getChildFile(path));
        }
    }

    void shutdown() override
    {
        screenshot = nullptr;
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
    /// Waits until the window is on the desktop (it has a native peer and is showing) and
    /// its editor has been up for a second (the response view's timer has run), writes a
    /// PNG of the whole window as JUCE paints it, and quits: return value 0 when written,
    /// 1 when the window never appeared within 30 s or the file could not be written.
    class Screenshot : private juce::Timer
    {
    public:
        Screenshot(StandaloneApp& a, juce::File f) : app(a), file(std::move(f)) { startTimer(100); }

    private:
        void timerCallback() override
        {
            ticks += 1;
            auto* w = app.window.get();
            const bool shown = w != nullptr && w->isShowing() && w->getPeer() != nullptr &&
                               w->getContentComponent() != nullptr;
            readyTicks = shown ? readyTicks + 1 : 0;
            if (readyTicks < 10 && ticks < 300)
                return;
            stopTimer();
            bool written = false;
            if (readyTicks >= 10)
            {
                const auto image = w->createComponentSnapshot(w->getLocalBounds(), true, 1.0f);
                file.deleteFile();
                juce::FileOutputStream out(file);
                written = out.openedOk() && juce::PNGImageFormat().writeImageToStream(image, out);
                out.flush();
                written = written && out.getStatus().wasOk();
            }
            std::fprintf(stderr, "Kerf: screenshot %s %s (%dx%d window)\n",
                         written ? "written to" : "FAILED for", file.getFullPathName().toRawUTF8(),
                         w != nullptr ? w->getWidth() : 0, w != nullptr ? w->getHeight() : 0);
            app.setApplicationReturnValue(written ? 0 : 1);
            app.systemRequestedQuit(); // saves the state and quits, as closing the window does
        }

        StandaloneApp& app;
        juce::File file;
        int ticks = 0, readyTicks = 0;
    };

    juce::ApplicationProperties appProperties;
    std::unique_ptr<StandaloneWindow> window;
    std::unique_ptr<Screenshot> screenshot;
};

} // namespace kerf

juce::JUCEApplicationBase* juce_CreateApplication()
{
    return new kerf::StandaloneApp();
}

#endif
